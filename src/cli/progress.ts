// A progress bar on a terminal (stderr), silent otherwise, so piped output stays machine-readable.

export class Progress {
  private readonly tty: boolean;
  private last = 0;
  constructor(private readonly label: string, private readonly total: number, quiet = false) {
    this.tty = !quiet && Boolean(process.stderr.isTTY);
  }
  update(done: number, note = ''): void {
    if (!this.tty) return;
    const now = Date.now();
    if (done < this.total && now - this.last < 100) return;
    this.last = now;
    const width = 28;
    const filled = Math.round((done / Math.max(1, this.total)) * width);
    const bar = '█'.repeat(filled) + '░'.repeat(width - filled);
    process.stderr.write(`\r${this.label} ${bar} ${done}/${this.total} ${note}`.slice(0, (process.stderr.columns || 120) - 1).padEnd(Math.min(110, (process.stderr.columns || 120) - 1)));
  }
  done(note = ''): void {
    if (!this.tty) return;
    this.update(this.total, note);
    process.stderr.write('\n');
  }
}

/** Seconds as "1 m 05 s". */
export function duration(sec: number): string {
  if (!Number.isFinite(sec)) return '?';
  const m = Math.floor(sec / 60), s = Math.round(sec % 60);
  return m > 0 ? `${m} m ${String(s).padStart(2, '0')} s` : `${s} s`;
}
