/**
 * `phasebook method check METHOD` and `phasebook method draft WORKLIST`.
 *
 * check: load and compile the method; print it in plain words (exit 0), or the
 * located reason it is not valid (exit 2).
 * draft: write a first method from a worklist's headers, to stdout or --out
 * (never replacing a file without --force); a summary goes to stderr.
 */
import { SCHEMA_URL } from '../method/schema-validator.js';
import { writeFile } from 'node:fs/promises';
import { dirname, relative, resolve, sep } from 'node:path';
import { fileURLToPath } from 'node:url';
import { InvalidArgumentError, type Command } from 'commander';
import { compileMethod } from '../engine/evaluate.js';
import { StopError } from '../errors.js';
import { EXIT, type CommandIo } from './io.js';
import { describeMethod } from './method/describe.js';
import { draftMethod, type DraftResult } from './method/draft.js';
import { loadMethod, parseMethod } from '../method/load.js';
import { readWorklist } from '../read/worklist.js';
import { writeFileAtomic } from '../write/atomic.js';
import { delimiter } from 'node:path';
import { listMethods, methodFolders, SHIPPED_METHODS } from '../method/find.js';
import { methodJson, stopJson } from './recalc-json.js';
import { describeFeeds } from './method/feeds.js';
import { mapColumns } from '../columns/map.js';


const SCHEMA_PATH = fileURLToPath(SCHEMA_URL);

interface DraftCliOptions {
  out?: string;
  force?: boolean;
  sheet?: string;
  name?: string;
}

export function registerMethodCommand(program: Command, io: CommandIo): Command {
  const stdout = io.stdout ?? ((t: string) => void process.stdout.write(t));
  const stderr = io.stderr ?? ((t: string) => void process.stderr.write(t));

  const method = program
    .command('method')
    .description('check a method file, or draft a first one from a worklist');

  method
    .command('list')
    .description('list the methods that can be named with -m: those in PHASEBOOK_METHODS folders, then the shipped ones')
    .action(() => {
      const methods = listMethods();
      const width = Math.max(4, ...methods.map((m) => m.name.length));
      const lines = methods.map((m) => `${m.name.padEnd(width)}  ${m.title || '(no title)'}${m.source === 'shipped' ? '' : `  [${m.file}]`}`);
      stdout(`${lines.join('\n')}\n`);
      const lab = methodFolders().filter((f) => f.source === 'PHASEBOOK_METHODS');
      stderr(
        lab.length
          ? `phasebook: ${methods.length} methods: from ${lab.map((f) => f.folder).join(', ')} (PHASEBOOK_METHODS), then the shipped ones in ${SHIPPED_METHODS}\n`
          : `phasebook: ${methods.length} shipped methods, in ${SHIPPED_METHODS}; set PHASEBOOK_METHODS to a folder of your own (several separated by "${delimiter}") to add yours\n`,
      );
      io.exit(EXIT.ok);
    });

  method
    .command('check')
    .description('validate a method and print it in plain words: fields and units, lab names, limits, formula order')
    .argument('<method>', 'method file (YAML), or the name of a method (phasebook method list)')
    .option('--json', 'print the method as loaded as one JSON document on stdout')
    .option('--worklist <file>', 'also show, for this worklist, which column feeds each field, which fields default, and which columns go unused')
    .option('--sheet <name>', 'with --worklist, an XLSX worklist: the sheet to read (default: the first)')
    .action(async (file: string, opts: { json?: boolean; worklist?: string; sheet?: string }) => {
      try {
        const loaded = loadMethod(file);
        const compiled = compileMethod(loaded);
        if (opts.json) stdout(JSON.stringify(methodJson(loaded, compiled.order.map((i) => loaded.formulas[i]!.name))) + '\n');
        else stdout(describeMethod(loaded, compiled));
        if (opts.worklist !== undefined) {
          const raw = await readWorklist(opts.worklist, { sheet: opts.sheet });
          const feeds = describeFeeds(raw, mapColumns(raw, loaded), loaded);
          if (opts.json) stderr(feeds);
          else stdout(`\n${feeds}`);
        }
        io.exit(EXIT.ok);
      } catch (err) {
        if (!(err instanceof StopError)) throw err;
        if (opts.json) stdout(JSON.stringify(stopJson(err)) + '\n');
        stderr(`phasebook: ${err.describe()}\nThe method is not valid.\n`);
        io.exit(EXIT.stop);
      }
    });

  method
    .command('draft')
    .description("write a first method from a worklist's headers, for the analyst to finish")
    .argument('<worklist>', 'worklist file (.csv or .xlsx)')
    .option('-o, --out <file>', 'write the method to this file (default: print it)')
    .option('-f, --force', 'replace the --out file if it exists')
    .option('--sheet <name>', 'XLSX worklist: the sheet to read (default: the first)')
    .option('--name <name>', 'method name (default: from the worklist file name)', parseMethodName)
    .action(async (worklist: string, opts: DraftCliOptions) => {
      const raw = await readWorklist(worklist, { sheet: opts.sheet });
      const target = opts.out === undefined ? undefined : resolve(opts.out);
      const schemaRef = relative(target ? dirname(target) : process.cwd(), SCHEMA_PATH).split(sep).join('/');
      const draft = draftMethod(raw, { name: opts.name, schemaRef });
      // The draft must load and compile; a failure here is a fault of the drafter, not of the worklist.
      compileMethod(parseMethod(draft.text, { file: opts.out ?? '(draft)' }));
      if (target) {
        await writeFileAtomic(target, (tmp) => writeFile(tmp, draft.text, 'utf8'), { force: opts.force, inputs: [{ path: worklist, role: 'the worklist' }] });
      } else {
        stdout(draft.text);
      }
      stderr(draftSummary(draft, opts.out));
      io.exit(EXIT.ok);
    });

  return method;
}

function parseMethodName(text: string): string {
  if (!/^[A-Za-z0-9][A-Za-z0-9_.-]*$/.test(text)) {
    throw new InvalidArgumentError(`expected a name of letters, digits, "_", "." and "-", starting with a letter or digit, got "${text}"`);
  }
  return text;
}

function draftSummary(d: DraftResult, out: string | undefined): string {
  const total = d.placed.length + d.unplaced.length;
  const lines = [`phasebook: placed ${d.placed.length} of ${total} header${total === 1 ? '' : 's'} on canonical fields`];
  if (d.unplaced.length) lines.push(`  not placed: ${d.unplaced.map((u) => `"${u.header}"`).join(', ')}`);
  if (d.missing.length) lines.push(`  required fields with no column: ${d.missing.join(', ')}`);
  for (const f of d.defaulted) {
    if (f.maybe.length) lines.push(`  CHECK: ${f.field} has no column and falls back to ${f.fallback}; ${f.maybe.map((h) => `"${h}"`).join(', ')} may be it`);
  }
  const guessed = d.sampleTypes.filter((c) => c.type && c.type !== c.code.toLowerCase()).length;
  const open = d.sampleTypes.filter((c) => !c.type).length;
  if (d.sampleTypes.length) {
    lines.push(`  sample-type codes: ${d.sampleTypes.length} found, ${guessed} guessed${open ? `, ${open} to complete` : ''}`);
  }
  lines.push(`  analytes: ${d.analytes.length} found, their data to fill in`);
  lines.push(out ? `Wrote ${out}. Finish it, then run: phasebook method check ${out}` : 'Finish the method, then run phasebook method check on it.');
  return lines.join('\n') + '\n';
}
