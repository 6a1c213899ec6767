/** Progress on stderr (only on a terminal, never with --quiet or --json) and the closing summary. */
export class Reporter {
  private lastLine = '';
  private lastDraw = 0;
  readonly tty: boolean;
  readonly colour: boolean;
  constructor(private readonly opts: { quiet: boolean; json: boolean; stream?: NodeJS.WriteStream }) {
    const s = opts.stream ?? process.stderr;
    this.tty = Boolean(s.isTTY) && !opts.quiet && !opts.json;
    this.colour = this.tty && !process.env.NO_COLOR;
  }
  private get stream(): NodeJS.WriteStream {
    return this.opts.stream ?? process.stderr;
  }

  progress(label: string, done: number, total: number): void {
    if (!this.tty) return;
    const now = Date.now();
    if (done < total && now - this.lastDraw < 80) return;
    this.lastDraw = now;
    const width = 24;
    const filled = total ? Math.round((done / total) * width) : width;
    const line = `${label.padEnd(8)} [${'#'.repeat(filled)}${'.'.repeat(width - filled)}] ${done}/${total}`;
    this.stream.write(`\r${line}${' '.repeat(Math.max(0, this.lastLine.length - line.length))}`);
    this.lastLine = line;
    if (done >= total) this.endLine();
  }

  endLine(): void {
    if (this.tty && this.lastLine) {
      this.stream.write('\n');
      this.lastLine = '';
    }
  }

  /** A note for people: stderr, suppressed by --quiet and --json. */
  note(message: string): void {
    if (this.opts.quiet || this.opts.json) return;
    this.endLine();
    this.stream.write(`${message}\n`);
  }

  warn(message: string): void {
    if (this.opts.quiet) return;
    this.endLine();
    this.stream.write(`warning: ${message}\n`);
  }

  bold(text: string): string {
    return this.colour ? `\u001b[1m${text}\u001b[22m` : text;
  }
}
