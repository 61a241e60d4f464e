/**
 * Progress on a terminal: rows read, evaluated and written, a bar and an
 * estimate of the time left, on one line of stderr that is rewritten in place.
 *
 * - Only on a terminal (the stream's isTTY), never with --quiet, and only once
 *   the work has taken more than a second (a small worklist shows nothing).
 * - NO_COLOR (https://no-color.org: set and not empty) or TERM=dumb leaves the bar uncoloured;
 *   the line is cleared with spaces and a carriage return, never an escape code.
 * - The pipeline reports through a callback (`onProgress`) and prints nothing
 *   itself (STYLE.md habit 5); this module turns the reports into the line.
 */

/** Stages as the user sees them. */
export type ProgressStage = 'read' | 'evaluate' | 'write';

export interface ProgressEvent {
  stage: ProgressStage;
  /** Rows through this stage so far. */
  rows: number;
  /** Rows in the worklist, once known (after reading). */
  totalRows?: number;
  /** Part of this stage done, 0..1, when the reporter can tell (e.g. bytes read of the file). */
  fraction?: number;
}

export type OnProgress = (event: ProgressEvent) => void;

/** What a progress line is written to: process.stderr, or a stand-in in tests. */
export interface ProgressStream {
  isTTY?: boolean;
  columns?: number;
  write(text: string): unknown;
}

export interface ProgressOptions {
  /** Default process.stderr. */
  stream?: ProgressStream;
  /** --quiet: no progress at all. Default false. */
  quiet?: boolean;
  /** Environment for NO_COLOR. Default process.env. */
  env?: Readonly<Record<string, string | undefined>>;
  /** Milliseconds of work before the line first shows. Default 1000. */
  delayMs?: number;
  /** Least milliseconds between two redraws. Default 100. */
  intervalMs?: number;
  /** Clock in milliseconds. Default performance.now. */
  now?: () => number;
}

/** Share of the whole run each stage takes, for the bar and the estimate (from the bench profile). */
const STAGE_WEIGHT: Record<ProgressStage, number> = { read: 0.4, evaluate: 0.25, write: 0.35 };
const STAGE_START: Record<ProgressStage, number> = { read: 0, evaluate: 0.4, write: 0.65 };
const BAR_WIDTH = 20;

export class ProgressLine {
  private readonly stream: ProgressStream;
  private readonly color: boolean;
  private readonly delayMs: number;
  private readonly intervalMs: number;
  private readonly now: () => number;
  private readonly started: number;
  private lastDraw = -Infinity;
  private shownWidth = 0;
  private readonly rows: Record<ProgressStage, number> = { read: 0, evaluate: 0, write: 0 };
  private totalRows: number | undefined;
  private fraction = 0;

  constructor(options: ProgressOptions & { stream: ProgressStream }) {
    this.stream = options.stream;
    const env = options.env ?? process.env;
    // No colour with NO_COLOR, or on a terminal that says it is dumb (TERM=dumb: no escape codes).
    this.color = !(env.NO_COLOR !== undefined && env.NO_COLOR !== '') && env.TERM !== 'dumb';
    this.delayMs = options.delayMs ?? 1000;
    this.intervalMs = options.intervalMs ?? 100;
    this.now = options.now ?? (() => performance.now());
    this.started = this.now();
  }

  /** The callback to hand to recalculate() and writeOutputs(). */
  readonly update: OnProgress = (event) => {
    this.rows[event.stage] = Math.max(this.rows[event.stage], event.rows);
    if (event.totalRows !== undefined) this.totalRows = event.totalRows;
    const part = event.fraction ?? (this.totalRows ? event.rows / this.totalRows : 0);
    const overall = STAGE_START[event.stage] + STAGE_WEIGHT[event.stage] * Math.min(1, Math.max(0, part));
    this.fraction = Math.max(this.fraction, overall);
    const t = this.now();
    if (t - this.started < this.delayMs || t - this.lastDraw < this.intervalMs) return;
    this.lastDraw = t;
    this.draw(this.render(t));
  };

  /** Take the line away (before the run's summary is printed). */
  finish(): void {
    if (this.shownWidth > 0) this.stream.write('\r' + ' '.repeat(this.shownWidth) + '\r');
    this.shownWidth = 0;
  }

  /**
   * The line at time `t`, without colour, at most `width` characters: bar and percent,
   * then as many whole parts as fit (the estimate, rows read, evaluated, written), so a
   * narrow terminal gets a shorter line, never one cut in the middle of a word.
   */
  render(t: number = this.now(), width = Infinity): string {
    const n = (x: number) => x.toLocaleString('en-US');
    const elapsed = (t - this.started) / 1000;
    const left = this.fraction > 0.02 ? (elapsed * (1 - this.fraction)) / this.fraction : NaN;
    const total = this.totalRows === undefined ? '' : ` of ${n(this.totalRows)}`;
    const percent = `${Math.floor(this.fraction * 100)}%`;
    const heads = [`phasebook: [${bar(this.fraction)}] ${percent}`, `[${bar(this.fraction)}] ${percent}`, percent];
    const parts = [
      Number.isFinite(left) ? `, about ${formatSeconds(left)} left` : '',
      `; rows read ${n(this.rows.read)}${total}`,
      `, evaluated ${n(this.rows.evaluate)}`,
      `, written ${n(this.rows.write)}`,
    ].filter((p) => p !== '');
    let line = heads.find((h) => h.length <= width) ?? percent.slice(0, Math.max(0, width));
    for (const part of parts) {
      if (line.length + part.length > width) break;
      line += part;
    }
    return line;
  }

  private draw(line: string): void {
    // Fit the terminal's width so the line never wraps (then \r could not take it back).
    const width = Math.max(4, (this.stream.columns || 80) - 1); // 0 when the terminal does not say
    const shown = line.length > width ? this.render(this.now(), width) : line;
    const pad = this.shownWidth > shown.length ? ' '.repeat(this.shownWidth - shown.length) : '';
    const b = `[${bar(this.fraction)}]`;
    const text = this.color && shown.includes(b) ? shown.replace(b, `[\u001b[36m${b.slice(1, -1)}\u001b[39m]`) : shown;
    this.stream.write('\r' + text + pad);
    this.shownWidth = shown.length;
  }
}

function bar(fraction: number): string {
  const filled = Math.round(fraction * BAR_WIDTH);
  return '#'.repeat(filled) + '-'.repeat(BAR_WIDTH - filled);
}

/**
 * A progress line for this run, or undefined when none may be shown: with
 * --quiet, or when the stream is not a terminal (a pipe, a file, CI logs).
 */
export function createProgress(options: ProgressOptions = {}): ProgressLine | undefined {
  const stream = options.stream ?? process.stderr;
  if (options.quiet || !stream.isTTY) return undefined;
  return new ProgressLine({ ...options, stream });
}

function formatSeconds(s: number): string {
  if (s < 60) return `${Math.max(1, Math.round(s))} s`;
  const m = Math.floor(s / 60);
  return `${m} min ${Math.round(s - 60 * m)} s`;
}
