// Long computations written as generators that yield between steps, so that a caller on the page can spread one
// over several tasks (ui/pace.ts `stepThrough`); `finish` runs one through at once, as the synchronous API does.

export type Steps<T> = Generator<void, T, void>;

/** Runs `steps` to the end and returns its result. */
export function finish<T>(steps: Steps<T>): T {
  for (;;) {
    const r = steps.next();
    if (r.done) return r.value;
  }
}
