/**
 * One-line progress on stderr for long steps: redrawn in place on a terminal,
 * a line every few seconds otherwise (CI logs), silent with --json.
 */
export class Progress {
  private lastLine = 0;
  private readonly started = Date.now();
  constructor(
    private readonly label: string,
    private readonly enabled = true,
    private readonly stream: NodeJS.WriteStream = process.stderr,
  ) {}

  update(done: number, total: number, detail = ''): void {
    if (!this.enabled) return;
    const now = Date.now();
    const finished = done >= total;
    if (!this.stream.isTTY && !finished && now - this.lastLine < 3000) return;
    this.lastLine = now;
    const width = 24;
    const filled = total > 0 ? Math.round((done / total) * width) : width;
    const bar = `${'#'.repeat(filled)}${'.'.repeat(width - filled)}`;
    const seconds = ((now - this.started) / 1000).toFixed(1);
    const line = `${this.label} [${bar}] ${done}/${total} ${seconds}s ${detail}`;
    if (this.stream.isTTY) this.stream.write(`\r${line.slice(0, (this.stream.columns ?? 100) - 1).padEnd((this.stream.columns ?? 100) - 1)}${finished ? '\n' : ''}`);
    else this.stream.write(`${line}\n`);
  }
}
