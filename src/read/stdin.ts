/**
 * `recalc -`: a CSV worklist on standard input (issue 18). The text is spooled, within
 * --max-bytes, to `<name>.csv` in a private temporary folder, and read from there like
 * any worklist (the CSV reader needs a file it can read twice: the header sniff, then
 * the stream); the outputs take their names from `<name>`. The folder is removed after
 * the run, and every message that would name the temporary file names standard input.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { open } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { StopError } from '../errors.js';
import { formatBytes } from '../format.js';

/** What a message says instead of the temporary file's path. */
export const STDIN_LABEL = 'standard input';

export interface Spooled {
  /** The file the worklist was written to. */
  path: string;
  /** Remove it (and its folder). */
  remove(): void;
  /** The same error, naming standard input where it named the spooled file. */
  relabel(err: unknown): unknown;
}

/** A worklist's name that outputs can take: letters, digits, dot, dash and underscore, not starting with a dot. */
export function checkWorklistName(name: string): string {
  if (!/^[A-Za-z0-9_-][A-Za-z0-9._-]{0,99}$/.test(name)) {
    throw new StopError('usage', `expected a worklist name made of letters, digits, ".", "_" and "-" (the outputs take it), got "${name}"`);
  }
  return name;
}

export async function spoolStdin(input: AsyncIterable<Buffer | string>, options: { name: string; maxBytes: number }): Promise<Spooled> {
  const folder = mkdtempSync(join(tmpdir(), 'phasebook-stdin-'));
  const path = join(folder, `${checkWorklistName(options.name)}.csv`);
  const remove = () => rmSync(folder, { recursive: true, force: true });
  let bytes = 0;
  const fh = await open(path, 'wx');
  try {
    for await (const chunk of input) {
      const buf = typeof chunk === 'string' ? Buffer.from(chunk) : chunk;
      bytes += buf.length;
      if (bytes > options.maxBytes) {
        throw new StopError('input', `is larger than the ${formatBytes(options.maxBytes)} accepted (--max-bytes)`, { file: STDIN_LABEL });
      }
      await fh.write(buf);
    }
  } catch (err) {
    await fh.close();
    remove();
    throw err;
  }
  await fh.close();
  const relabel = (err: unknown): unknown =>
    err instanceof StopError && err.location.file === path ? new StopError(err.kind, err.message, { ...err.location, file: STDIN_LABEL }) : err;
  return { path, remove, relabel };
}
