/**
 * The one error channel for "the whole run cannot go on" (STYLE.md habit 4).
 * Row-level trouble is data (see issues.ts), never one of these.
 *
 * `kind` lets the CLI choose words; every kind means exit code 2, nothing written.
 */
export type StopKind =
  | 'usage' // bad options or arguments
  | 'input' // unreadable, empty, wrong format, missing or doubled column, bad unit
  | 'method' // method file fails its schema, a formula is refused, a cycle
  | 'output'; // target exists without --force, cannot write

export interface StopLocation {
  /** File the problem is in. */
  file?: string;
  /** 1-based line (method YAML, CSV text) or spreadsheet row (header = row 1). */
  line?: number;
  /**
   * What `line` counts, for the printed place: a spreadsheet `row` or a text
   * `line` (default: line for a method file, row otherwise). A CSV problem
   * found in the text itself (an unclosed quote, a bad byte) is on a text line,
   * which differs from the row after a quoted cell with line breaks.
   */
  lineKind?: 'row' | 'line';
  /** Column header, or the method key path (e.g. "formulas[2].expr"). */
  column?: string;
}

export class StopError extends Error {
  readonly kind: StopKind;
  readonly location: StopLocation;

  constructor(kind: StopKind, message: string, location: StopLocation = {}) {
    super(message);
    this.name = 'StopError';
    this.kind = kind;
    this.location = location;
  }

  /** The message with its place in front: `file.csv, row 3, column "x": ...`. */
  describe(): string {
    const parts: string[] = [];
    if (this.location.file) parts.push(this.location.file);
    if (this.location.line !== undefined) {
      parts.push(`${this.location.lineKind ?? (this.kind === 'method' ? 'line' : 'row')} ${this.location.line}`);
    }
    if (this.location.column !== undefined) {
      parts.push(`${this.kind === 'method' ? 'key' : 'column'} "${this.location.column}"`);
    }
    return parts.length ? `${parts.join(', ')}: ${this.message}` : this.message;
  }
}

/** A file-system error in words for a message ("no such file", not "ENOENT"). */
export function fsReason(err: unknown): string {
  const code = (err as { code?: unknown } | null)?.code;
  switch (code) {
    case 'ENOENT':
      return 'no such file';
    case 'EACCES':
    case 'EPERM':
      return 'permission denied';
    case 'EISDIR':
      return 'it is a folder';
    case 'EEXIST':
    case 'ENOTDIR':
      return 'a file of that name is in the way';
    case 'ENOSPC':
      return 'the disk is full';
    case 'EDQUOT':
      return 'the disk quota is used up';
    case 'EROFS':
      return 'the file system is read-only';
    case 'EIO':
      return 'the disk reported an input/output error';
    default:
      return err instanceof Error ? err.message : String(err);
  }
}

/**
 * The run was interrupted (SIGINT, SIGTERM) while its outputs were being put in place: they were put
 * back as they were, and the command line exits with `exitCode` (128 + the signal number).
 */
export class Interrupted extends Error {
  constructor(readonly exitCode: number) {
    super('interrupted while the outputs were being put in place; they were put back as they were');
    this.name = 'Interrupted';
  }
}
