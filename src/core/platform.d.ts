// The few platform globals the DOM-free core relies on; Node 20, browsers and workers all provide them.
// Declared here because the core is compiled without the DOM library on purpose.

declare class TextDecoder {
  constructor(label?: string, options?: { fatal?: boolean; ignoreBOM?: boolean });
  decode(input?: ArrayBufferView | ArrayBuffer): string;
}
declare class TextEncoder {
  encode(input?: string): Uint8Array;
}
declare const performance: { now(): number };
declare const console: { log(...a: unknown[]): void; warn(...a: unknown[]): void; error(...a: unknown[]): void };
declare function setTimeout(fn: () => void, ms?: number): unknown;
declare const crypto: {
  readonly subtle: { digest(algorithm: 'SHA-256', data: ArrayBuffer | ArrayBufferView): Promise<ArrayBuffer> };
};
/** A blob of bytes (a database dump); core only passes it through. */
declare interface Blob {
  readonly size: number;
  arrayBuffer(): Promise<ArrayBuffer>;
}
declare function atob(data: string): string;
/** The part of WebAssembly the core's SIMD kernel uses (ops/neighbour-max.ts). */
declare namespace WebAssembly {
  class Module {
    constructor(bytes: ArrayBufferView | ArrayBuffer);
  }
  class Instance {
    constructor(module: Module, imports?: Record<string, unknown>);
    readonly exports: Record<string, unknown>;
  }
  class Memory {
    readonly buffer: ArrayBuffer;
    grow(pages: number): number;
  }
}
