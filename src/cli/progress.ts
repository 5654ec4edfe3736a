// Progress of long steps, on stderr only: a bar when stderr is a terminal, JSON lines when asked
// (`--progress json`), nothing otherwise, so stdout stays machine-readable.

export type ProgressMode = 'bar' | 'json' | 'none';

let mode: ProgressMode = 'bar';

/** Set once per command by the command line's entry point. */
export function setProgressMode(m: ProgressMode): void {
  mode = m;
}

export class Progress {
  private readonly show: ProgressMode;
  private last = 0;
  constructor(
    private readonly label: string,
    public total: number,
    quiet = false,
  ) {
    this.show = mode === 'json' ? 'json' : !quiet && mode === 'bar' && Boolean(process.stderr.isTTY) ? 'bar' : 'none';
  }
  update(done: number, note = ''): void {
    if (this.show === 'none') return;
    const now = Date.now();
    if (done < this.total && now - this.last < (this.show === 'json' ? 1000 : 100)) return;
    this.last = now;
    if (this.show === 'json') {
      process.stderr.write(
        JSON.stringify({ event: 'progress', stage: this.label, done, total: this.total, ...(note ? { note } : {}) }) +
          '\n',
      );
      return;
    }
    const width = 28;
    const filled = Math.round((done / Math.max(1, this.total)) * width);
    const bar = '█'.repeat(filled) + '░'.repeat(width - filled);
    process.stderr.write(
      `\r${this.label} ${bar} ${done}/${this.total} ${note}`
        .slice(0, (process.stderr.columns || 120) - 1)
        .padEnd(Math.min(110, (process.stderr.columns || 120) - 1)),
    );
  }
  done(note = ''): void {
    if (this.show === 'none') return;
    this.update(this.total, note);
    if (this.show === 'bar') process.stderr.write('\n');
  }
}

/** Seconds as "1 m 05 s". */
export function duration(sec: number): string {
  if (!Number.isFinite(sec)) return '?';
  const m = Math.floor(sec / 60),
    s = Math.round(sec % 60);
  return m > 0 ? `${m} m ${String(s).padStart(2, '0')} s` : `${s} s`;
}
