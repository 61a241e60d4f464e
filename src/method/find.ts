/**
 * Methods by name (issue 18): `-m surface-water` finds a method without a path.
 *
 * A `--method` value that names an existing file is that file, as always. Otherwise a
 * bare name (no folder, with or without `.yaml`/`.yml`) is looked up in the folders of
 * `PHASEBOOK_METHODS` (separated by `:`, or `;` on Windows, in order: a lab's own
 * methods, which may reuse a shipped name on purpose) and then among the methods
 * shipped in phasebook's `templates/` folder. The file used is the one the outputs
 * name in their provenance.
 */
import { existsSync, readdirSync, readFileSync, statSync } from 'node:fs';
import { basename, delimiter, extname, join, resolve, sep } from 'node:path';
import { fileURLToPath } from 'node:url';
import { StopError } from '../errors.js';

/** phasebook's own methods. */
export const SHIPPED_METHODS = fileURLToPath(new URL('../../templates/', import.meta.url));

const EXTENSIONS = ['.yaml', '.yml'];

export interface MethodEntry {
  name: string;
  /** The method's title (its `title:` line), or '' when it has none. */
  title: string;
  file: string;
  /** Where it was found: the shipped methods or a PHASEBOOK_METHODS folder. */
  source: 'shipped' | 'PHASEBOOK_METHODS';
}

/** The folders searched, in order, from the environment. */
export function methodFolders(env: NodeJS.ProcessEnv = process.env): Array<{ folder: string; source: MethodEntry['source'] }> {
  const lab = (env.PHASEBOOK_METHODS ?? '')
    .split(delimiter)
    .map((f) => f.trim())
    .filter((f) => f !== '')
    .map((f) => ({ folder: resolve(f), source: 'PHASEBOOK_METHODS' as const }));
  return [...lab, { folder: SHIPPED_METHODS, source: 'shipped' }];
}

/** The method file a `--method` value means, or a StopError naming the methods there are. */
export function resolveMethod(value: string, env: NodeJS.ProcessEnv = process.env): string {
  if (existsSync(value)) return value;
  const bare = !value.includes('/') && !value.includes(sep);
  if (!bare) return value; // a path that does not exist: the loader says so, with the path
  const stem = EXTENSIONS.includes(extname(value).toLowerCase()) ? value.slice(0, -extname(value).length) : value;
  for (const { folder } of methodFolders(env)) {
    for (const ext of EXTENSIONS) {
      const file = join(folder, stem + ext);
      if (isFile(file)) return file;
    }
  }
  const known = listMethods(env).map((m) => m.name);
  throw new StopError(
    'method',
    `is neither a file nor the name of a method; the methods by name are ${known.map((n) => `"${n}"`).join(', ')} ` +
      '(phasebook method list shows them; PHASEBOOK_METHODS adds a folder of your own)',
    { file: value },
  );
}

/** Every method that can be named, first one of a name winning (as resolveMethod picks). */
export function listMethods(env: NodeJS.ProcessEnv = process.env): MethodEntry[] {
  const out: MethodEntry[] = [];
  const seen = new Set<string>();
  for (const { folder, source } of methodFolders(env)) {
    let names: string[];
    try {
      names = readdirSync(folder).sort();
    } catch {
      continue; // a folder in PHASEBOOK_METHODS that is not there: nothing to list
    }
    for (const entry of names) {
      const ext = extname(entry).toLowerCase();
      if (!EXTENSIONS.includes(ext)) continue;
      const name = basename(entry, extname(entry));
      const file = join(folder, entry);
      if (seen.has(name) || !isFile(file)) continue;
      seen.add(name);
      out.push({ name, title: titleOf(file), file, source });
    }
  }
  return out;
}

function isFile(path: string): boolean {
  try {
    return statSync(path).isFile();
  } catch {
    return false;
  }
}

/** The `title:` of a method file, read from its text without loading it (a listing must not stop on one bad file). */
function titleOf(file: string): string {
  try {
    const m = /^title:[ \t]*(.+?)[ \t]*$/m.exec(readFileSync(file, 'utf8').slice(0, 64 * 1024));
    return m ? m[1]!.replace(/^(["'])(.*)\1$/, '$2') : '';
  } catch {
    return '';
  }
}
