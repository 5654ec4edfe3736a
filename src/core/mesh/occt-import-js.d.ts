// occt-import-js ships no types: its default export is an Emscripten module factory.
declare module 'occt-import-js' {
  const factory: (options?: object) => Promise<unknown>;
  export default factory;
}
