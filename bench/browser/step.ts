// Page script of the benchmark page: times the reference training step in a module worker, as the workbench's
// training worker runs it (production build, tfjs-wasm, one thread).

type StepResult = { msPerStep: number; backend: string };

(window as unknown as { shapekinBenchStep: (repeats?: number) => Promise<StepResult> }).shapekinBenchStep = (
  repeats = 7,
) =>
  new Promise<StepResult>((resolve, reject) => {
    const worker = new Worker(new URL('./step.worker.ts', import.meta.url), { type: 'module' });
    worker.onmessage = (e: MessageEvent<StepResult | { error: string }>) => {
      worker.terminate();
      if ('error' in e.data) reject(new Error(e.data.error));
      else resolve(e.data);
    };
    worker.onerror = (e) => {
      worker.terminate();
      reject(new Error(e.message));
    };
    worker.postMessage({ repeats });
  });
