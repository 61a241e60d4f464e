#!/usr/bin/env node
/**
 * argv → options → pipeline → terminal text and exit code. The only module that
 * prints or exits (STYLE.md habit 5).
 *
 * Exit codes (DESIGN.md §6): 0 written and the batch passed; 1 written, with QC
 * failures or row errors; 2 nothing written.
 */
import { Command, CommanderError, InvalidArgumentError, Option } from 'commander';
import { Interrupted, StopError } from './errors.js';
import { EXIT } from './commands/io.js';
import { registerTrendsCommand } from './commands/trends.js';
import { registerFiguresCommand } from './commands/figures.js';
import { registerMethodCommand } from './commands/method.js';
import { registerPlanCommand } from './commands/plan.js';
import { registerVerifyCommand } from './commands/verify.js';
import { registerSignCommand } from './commands/sign.js';
import type { RecalcResult } from './pipeline.js';
import { runRecalc } from './run.js';
import { describeFailedControl } from './summary/failures.js';
import { recalcJson, stopJson } from './commands/recalc-json.js';
import { STDIN_LABEL, spoolStdin } from './read/stdin.js';
import { VERSION } from './version.js';
import { installSignalHandlers } from './cli-signals.js';
import { CSV_DIALECTS, OUTPUT_KINDS, type CsvDialectChoice, type OutputKind } from './outputs.js';
import { createProgress, type ProgressLine } from './progress.js';

const debug = process.argv.includes('--debug');

function parseBytes(text: string): number {
  const m = /^\s*(\d+(?:\.\d+)?)\s*([kmg]i?b?|b)?\s*$/i.exec(text);
  if (!m) throw new InvalidArgumentError(`expected a size such as 256MB or 1GB, got "${text}"`);
  const unit = (m[2] ?? 'b').toLowerCase()[0]!;
  const mult = unit === 'k' ? 1024 : unit === 'm' ? 1024 ** 2 : unit === 'g' ? 1024 ** 3 : 1;
  return Math.floor(Number(m[1]) * mult);
}

function parseOutputs(text: string): OutputKind[] {
  const kinds = text.split(',').map((s) => s.trim().toLowerCase()).filter(Boolean);
  for (const k of kinds) {
    if (!(OUTPUT_KINDS as readonly string[]).includes(k)) {
      throw new InvalidArgumentError(`expected a list of ${OUTPUT_KINDS.join(', ')}, got "${k}"`);
    }
  }
  if (kinds.length === 0) throw new InvalidArgumentError('expected at least one output');
  return kinds as OutputKind[];
}

function parseTimestamp(text: string): string {
  const t = Date.parse(text);
  if (Number.isNaN(t)) throw new InvalidArgumentError(`expected an ISO 8601 time such as 2026-11-20T16:00:00Z, got "${text}"`);
  return new Date(t).toISOString();
}

export function buildProgram(io: { exit: (code: number) => void }): Command {
  const program = new Command('phasebook')
    .description('Recalculate a liquid-liquid extraction worklist: pre-extraction concentrations, recovery, RPD, QC flags and a reviewer workbook')
    .version(VERSION, '-V, --version')
    .option('--debug', 'show stack traces of unexpected errors')
    .showHelpAfterError()
    .exitOverride();

  program
    .command('recalc')
    .description('recalculate a worklist (CSV or XLSX) with a method and write the results CSV and workbook')
    .argument('<worklist>', 'worklist file (.csv or .xlsx), or - for CSV on standard input')
    .requiredOption('-m, --method <file>', 'method file (YAML), or the name of a method (phasebook method list), e.g. surface-water')
    .requiredOption('-o, --out <dir>', 'folder to write the outputs into')
    .option('--sheet <name>', 'XLSX worklist: the sheet to read (default: the first)')
    .addOption(new Option('--outputs <list>', `outputs to write, comma-separated (${OUTPUT_KINDS.join(', ')})`).argParser(parseOutputs))
    .option('-f, --force', 'replace outputs that already exist')
    .addOption(new Option('--timestamp <iso>', 'time recorded in the outputs (default: now), for reproducible files').argParser(parseTimestamp))
    .addOption(new Option('--max-bytes <size>', 'refuse worklists larger than this').default(256 * 1024 ** 2, '256MB').argParser(parseBytes))
    .addOption(new Option('--max-unpacked <size>', 'refuse XLSX worklists that unpack past this').default(512 * 1024 ** 2, '512MB').argParser(parseBytes))
    .option('--history <file>', 'QC history database (SQLite): control charts in the report, and this run recorded in it')
    .option('-q, --quiet', 'print nothing but errors')
    .option('--json', 'print the outcome as one JSON document on stdout (the summary on stderr is then left out)')
    .option('--name <name>', 'with -: the worklist\'s name, which the outputs take (default: stdin)')
    .addOption(
      new Option('--csv-dialect <dialect>', 'the results CSV: as the worklist (default), comma (decimal point), semicolon (decimal comma) or tab')
        .choices([...CSV_DIALECTS])
        .default('as-input'),
    )
    .action(async (worklist: string, opts: RecalcCliOptions) => {
      io.exit(await recalcCommand(worklist, opts));
    });
  registerTrendsCommand(program, io);
  registerFiguresCommand(program, io);
  registerMethodCommand(program, io);
  registerPlanCommand(program, io);
  registerVerifyCommand(program, io);
  registerSignCommand(program, io);

  return program;
}

interface RecalcCliOptions {
  method: string;
  out: string;
  sheet?: string;
  outputs?: OutputKind[];
  force?: boolean;
  timestamp?: string;
  maxBytes: number;
  maxUnpacked: number;
  history?: string;
  quiet?: boolean;
  json?: boolean;
  name?: string;
  csvDialect?: CsvDialectChoice;
}

async function recalcCommand(worklist: string, opts: RecalcCliOptions): Promise<number> {
  if (opts.json) {
    // The document goes to stdout and nothing else does; the words for people stay off (errors still go to stderr).
    try {
      return await recalcCommandQuietly(worklist, { ...opts, quiet: true });
    } catch (err) {
      if (err instanceof StopError) process.stdout.write(JSON.stringify(stopJson(err)) + '\n');
      throw err;
    }
  }
  return recalcCommandQuietly(worklist, opts);
}

async function recalcCommandQuietly(worklist: string, opts: RecalcCliOptions): Promise<number> {
  if (worklist !== '-') {
    if (opts.name !== undefined) throw new StopError('usage', '--name goes with - (a worklist on standard input); a file names its own outputs');
    return recalcShowingProgress(worklist, opts);
  }
  const spooled = await spoolStdin(process.stdin, { name: opts.name ?? 'stdin', maxBytes: opts.maxBytes });
  try {
    return await recalcShowingProgress(spooled.path, opts, STDIN_LABEL);
  } catch (err) {
    throw spooled.relabel(err);
  } finally {
    spooled.remove();
  }
}

async function recalcShowingProgress(worklist: string, opts: RecalcCliOptions, label?: string): Promise<number> {
  // On a terminal, work over a second shows a progress line on stderr (progress.ts).
  const progress = createProgress({ quiet: opts.quiet });
  try {
    return await recalcWithProgress(worklist, opts, progress, label);
  } finally {
    progress?.finish();
  }
}

async function recalcWithProgress(worklist: string, opts: RecalcCliOptions, progress: ProgressLine | undefined, label?: string): Promise<number> {
  const outcome = await runRecalc(worklist, {
    method: opts.method,
    out: opts.out,
    outputs: opts.outputs,
    force: opts.force,
    history: opts.history,
    sheet: opts.sheet,
    maxBytes: opts.maxBytes,
    maxUnpackedBytes: opts.maxUnpacked,
    timestamp: opts.timestamp ?? new Date().toISOString(),
    command: ['phasebook', ...process.argv.slice(2)].join(' '),
    version: VERSION,
    onProgress: progress?.update,
    onNotice: opts.quiet ? undefined : (text) => process.stderr.write(`phasebook: ${text}\n`),
    csvDialect: opts.csvDialect,
  });
  progress?.finish();
  const { result, written, history } = outcome;
  if (outcome.workbookDeclined) process.stderr.write(`phasebook: ${outcome.workbookDeclined}\n`);
  if (history?.notRecorded !== undefined) {
    // The outputs are complete; only the history lacks this run. Exit 1: written, with a finding.
    process.stderr.write(
      `phasebook: the outputs were written in full, but the run is not in the QC history: ${history.notRecorded}; ` +
        'run the same command again with --force to record it\n',
    );
    if (!opts.quiet) process.stderr.write(describeRun(result, written, label));
    if (opts.json) process.stdout.write(JSON.stringify(recalcJson(outcome, EXIT.findings, label)) + '\n');
    return EXIT.findings;
  }
  const recorded = history?.recorded
    ? history.recorded.alreadyRecorded
      ? `This worklist and method were already in ${history.file}; nothing added.`
      : `Recorded ${history.recorded.added} control row${history.recorded.added === 1 ? '' : 's'} in ${history.file}.`
    : '';
  const code = exitCodeOf(result);
  if (!opts.quiet) process.stderr.write(describeRun(result, written, label) + (recorded ? `${recorded}\n` : ''));
  if (opts.json) process.stdout.write(JSON.stringify(recalcJson(outcome, code, label)) + '\n');
  return code;
}

/** 1 when any control fails, any row has an input error, or the verdict is fail. */
export function exitCodeOf(result: RecalcResult): number {
  const inputErrors = result.table.rowError.some((x) => x === 1);
  const failedControl = result.qc.status.some((s) => s === 'fail');
  return inputErrors || failedControl || result.verdict.verdict === 'fail' ? EXIT.findings : EXIT.ok;
}

/** Failed controls named on the terminal before the rest are counted. */
const TERMINAL_FAILED_CONTROLS = 20;

function describeRun(result: RecalcResult, written: Record<string, string[]>, label = result.worklist.path): string {
  const errors = result.table.rowError.reduce((a, b) => a + b, 0);
  const controls = result.qc.status.filter((s) => s !== '').length;
  const failed = result.qc.status.filter((s) => s === 'fail').length;
  const lines: string[] = [];
  lines.push(
    `phasebook: read ${result.rowsIn} row${result.rowsIn === 1 ? '' : 's'} from ${label} with method ${result.method.name}; ` +
      `${errors} row${errors === 1 ? '' : 's'} with input errors; ${controls} control row${controls === 1 ? '' : 's'}, ${failed} failed; ` +
      `wrote ${Object.values(written).flat().join(', ')}.`,
  );
  // How the numbers were read (decided once per file; a text file always says so).
  const nf = result.table.numberFormat;
  if (result.raw.format.kind === 'csv' || nf.basis !== 'delimiter') lines.push(`Numbers read with ${nf.how}.`);
  for (const note of result.columnMap.notes) lines.push(`Note: ${note}.`);
  for (const g of result.groups) {
    if (g.verdict === 'fail') lines.push(`  FAIL ${g.batch ? `batch ${g.batch}, ` : ''}${g.analyte}: ${g.reasons.join('; ')}`);
  }
  // Every failed control by name, value and limit (tolerated ones too): the verdict alone may say PASS.
  const failedControls = result.verdict.failedControls;
  if (failedControls.length > 0) {
    lines.push(`Failed controls (${failedControls.length}):`);
    for (const c of failedControls.slice(0, TERMINAL_FAILED_CONTROLS)) lines.push(`  ${describeFailedControl(c)}`);
    const more = failedControls.length - TERMINAL_FAILED_CONTROLS;
    if (more > 0) lines.push(`  and ${more.toLocaleString('en-US')} more: the workbook's Summary sheet and the results CSV list every one`);
  }
  const h = result.verdict.headline;
  lines.push(`Batch verdict: ${h.label}: ${h.sentence}`);
  return lines.join('\n') + '\n';
}

export async function main(argv: string[]): Promise<number> {
  let code: number = EXIT.ok;
  // An error outside this promise chain (a late stream error, a timer) gets the same one line: no stack without --debug.
  const crash = (err: unknown) => {
    process.stderr.write(`phasebook: unexpected error: ${(err as Error)?.message ?? String(err)}\nNothing was written.${debug ? '' : ' (run with --debug for details)'}\n`);
    if (debug && (err as Error)?.stack) process.stderr.write((err as Error).stack + '\n');
    process.exit(EXIT.stop); // the exit handler of write/atomic.ts removes temp files
  };
  process.on('uncaughtException', crash);
  process.on('unhandledRejection', crash);
  // Every command that writes (recalc, method draft, sign) commits through write/atomic.ts.
  installSignalHandlers();
  const program = buildProgram({ exit: (c) => (code = c) });
  try {
    await program.parseAsync(argv);
    return code;
  } catch (err) {
    if (err instanceof CommanderError) {
      // --help and --version end with code 0; usage errors were already printed by commander.
      return err.exitCode === 0 ? EXIT.ok : EXIT.stop;
    }
    if (err instanceof Interrupted) {
      process.stderr.write(`phasebook: ${err.message}\nNothing was written.\n`);
      return err.exitCode;
    }
    if (err instanceof StopError) {
      process.stderr.write(`phasebook: ${err.describe()}\nNothing was written.\n`);
      if (debug && err.stack) process.stderr.write(err.stack + '\n');
      return EXIT.stop;
    }
    process.stderr.write(`phasebook: unexpected error: ${(err as Error)?.message ?? String(err)}\nNothing was written.${debug ? '' : ' (run with --debug for details)'}\n`);
    if (debug && (err as Error)?.stack) process.stderr.write((err as Error).stack + '\n');
    return EXIT.stop;
  }
}

// The exit code is the settled run's, and only that: until main settles it is 2, so a process
// whose event loop runs dry while a write still waits (a stream that never answers) cannot
// exit 0 with nothing written (issue 19: a full disk did exactly that).
let settled = false;
process.exitCode = EXIT.stop;
process.once('beforeExit', () => {
  if (settled) return;
  process.stderr.write('phasebook: the run ended before it finished: an operation never completed (please report this)\nNothing was written.\n');
});
main(process.argv).then(
  (code) => {
    settled = true;
    process.exitCode = code;
  },
  () => {
    settled = true;
    process.exitCode = EXIT.stop;
  },
);
