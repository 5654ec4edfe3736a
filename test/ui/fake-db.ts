// A stand-in for the database worker in the page-side tests: it answers one kind of request ('load-meshes',
// 'load-clouds') with what it holds by name, in the order named, leaving out names it does not hold, and records
// the names each request asked for.

export function fakeDbWorker<T extends object>(answers: string, held: Map<string, T>, asked: string[][]) {
  return class FakeWorker {
    onmessage: ((e: { data: unknown }) => void) | null = null;
    onerror: ((e: { message: string }) => void) | null = null;
    postMessage(msg: { id: number; type: string; names?: string[] }): void {
      if (msg.type !== answers) throw new Error(`unexpected ${msg.type}`);
      asked.push(msg.names!);
      const value = msg.names!.filter((n) => held.has(n)).map((name) => ({ name, ...held.get(name)! }));
      setTimeout(() => this.onmessage?.({ data: { id: msg.id, ok: true, value } }), 0);
    }
  };
}
