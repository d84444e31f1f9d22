/**
 * Progress reporting for long file/stream jobs: a self-redrawing line (rows, rate, ETA) on stderr
 * only when stderr is a TTY, and a one-line final summary always. The clock is read here (services/),
 * never in libs/.
 */

export interface ProgressSink {
  write(chunk: string): unknown;
  isTTY?: boolean;
  columns?: number;
}

export interface ProgressOptions {
  /** What is being counted, e.g. "rows". */
  unit?: string;
  /** Total work in `totalOf` units (e.g. file bytes) for a percentage and ETA; omit when unknown. */
  total?: number;
  /** Stream to draw on; default process.stderr. */
  stream?: ProgressSink;
  /** Minimum ms between redraws (default 200) so drawing never costs throughput. */
  intervalMs?: number;
  /** Force drawing on or off (default: stream.isTTY). */
  live?: boolean;
  /** Clock, injectable for tests. */
  now?: () => number;
}

export function formatCount(n: number): string {
  if (n >= 1e9) return `${(n / 1e9).toFixed(2)}G`;
  if (n >= 1e6) return `${(n / 1e6).toFixed(2)}M`;
  if (n >= 1e4) return `${(n / 1e3).toFixed(1)}k`;
  return String(Math.round(n));
}

export function formatSeconds(s: number): string {
  if (!Number.isFinite(s) || s < 0) return '--';
  if (s < 60) return `${s.toFixed(s < 10 ? 1 : 0)}s`;
  const m = Math.floor(s / 60);
  if (m < 60) return `${m}m${String(Math.round(s - m * 60)).padStart(2, '0')}s`;
  const h = Math.floor(m / 60);
  return `${h}h${String(m - h * 60).padStart(2, '0')}m`;
}

export class Progress {
  private readonly unit: string;
  private readonly total: number | undefined;
  private readonly stream: ProgressSink;
  private readonly intervalMs: number;
  private readonly live: boolean;
  private readonly now: () => number;
  private readonly started: number;
  private lastDraw = 0;
  private drawn = false;
  private count = 0;
  private done = 0;

  constructor(opts: ProgressOptions = {}) {
    this.unit = opts.unit ?? 'rows';
    this.total = opts.total && opts.total > 0 ? opts.total : undefined;
    this.stream = opts.stream ?? process.stderr;
    this.intervalMs = opts.intervalMs ?? 200;
    this.live = opts.live ?? this.stream.isTTY === true;
    this.now = opts.now ?? (() => performance.now());
    this.started = this.now();
  }

  /** Record progress: `count` items so far and, when a total is known, `done` of the total (e.g. bytes read). */
  update(count: number, done?: number): void {
    this.count = count;
    if (done !== undefined) this.done = done;
    if (!this.live) return;
    const t = this.now();
    if (t - this.lastDraw < this.intervalMs) return;
    this.lastDraw = t;
    this.draw(t);
  }

  get elapsedSeconds(): number {
    return (this.now() - this.started) / 1000;
  }

  /** The live line's text (exposed for tests). */
  line(t: number = this.now()): string {
    const secs = Math.max((t - this.started) / 1000, 1e-9);
    const rate = this.count / secs;
    const parts = [`${formatCount(this.count)} ${this.unit}`, `${formatCount(rate)} ${this.unit}/s`];
    if (this.total !== undefined) {
      const frac = Math.min(this.done / this.total, 1);
      const width = 20;
      const filled = Math.round(frac * width);
      const eta = frac > 0 ? (secs * (1 - frac)) / frac : Number.NaN;
      parts.unshift(
        `[${'#'.repeat(filled)}${'.'.repeat(width - filled)}] ${(frac * 100).toFixed(0).padStart(3)}%`,
      );
      parts.push(`ETA ${formatSeconds(eta)}`);
    }
    return parts.join('  ');
  }

  private draw(t: number): void {
    const cols = this.stream.columns && this.stream.columns > 10 ? this.stream.columns - 1 : 100;
    this.stream.write(`\r${this.line(t).slice(0, cols)}\x1b[K`);
    this.drawn = true;
  }

  /** Clear the live line (if any) and write the final one-line summary, always. */
  finish(summary: string): void {
    if (this.drawn) this.stream.write('\r\x1b[K');
    this.stream.write(summary.endsWith('\n') ? summary : `${summary}\n`);
  }
}
