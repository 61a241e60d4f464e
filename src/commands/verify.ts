/**
 * `phasebook verify WORKBOOK`: recompute every computed cell of a handed-over
 * workbook from its own input cells with the method it carries, compare with what
 * is stored, and check the integrity digest.
 *
 * Exit 0: untouched. Exit 1: one line per difference on standard output (sheet,
 * cell, worklist row, sample id, the two values). Exit 2: not a phasebook
 * workbook, or unreadable.
 */
import type { Command } from 'commander';
import { StopError } from '../errors.js';
import { EXIT, type CommandIo } from './io.js';
import { formatDifference } from '../verify/difference.js';
import { stopJson } from './recalc-json.js';
import { VERSION } from '../version.js';

interface VerifyCliOptions {
  quiet?: boolean;
  json?: boolean;
}

/** Standard output that tolerates a reader going away (`phasebook verify x.xlsx | head`). */
function writeToStdout(text: string): void {
  if (!process.stdout.listeners('error').includes(ignoreEpipe)) process.stdout.on('error', ignoreEpipe);
  process.stdout.write(text);
}

function ignoreEpipe(err: NodeJS.ErrnoException): void {
  if (err.code !== 'EPIPE') throw err;
}

export function registerVerifyCommand(program: Command, io: CommandIo): void {
  const stdout = io.stdout ?? writeToStdout;
  const stderr = io.stderr ?? ((t: string) => void process.stderr.write(t));
  program
    .command('verify')
    .description('check a phasebook workbook: recompute it from its own input cells and method, compare, and check its integrity digest')
    .argument('<workbook>', 'workbook (.xlsx) written by "phasebook recalc"')
    .option('-q, --quiet', 'print the differences only, not the summary line')
    .option('--json', 'print the outcome as one JSON document on stdout (differences with sheet, cell, row, sample and message)')
    .action(async (workbook: string, opts: VerifyCliOptions) => {
      let report;
      try {
        // Loaded here, not at start-up: only `verify` needs the workbook reader.
        const { verifyWorkbook } = await import('../verify/verify.js');
        report = await verifyWorkbook(workbook);
      } catch (err) {
        if (!(err instanceof StopError)) throw err;
        if (opts.json) stdout(JSON.stringify(stopJson(err)) + '\n');
        stderr(`phasebook: ${err.describe()}\n`);
        io.exit(EXIT.stop);
        return;
      }
      const n = report.differences.length;
      if (opts.json) {
        const code = n === 0 ? EXIT.ok : EXIT.findings;
        stdout(
          JSON.stringify({
            phasebook: VERSION,
            exit_code: code,
            workbook,
            rows: report.rows,
            untouched: n === 0,
            digest_matches: report.digestMatches ?? null,
            differences: report.differences.map((d) => ({
              sheet: d.sheet,
              cell: d.address ?? null,
              worklist_row: d.context?.worklistRow ?? null,
              sample_id: d.context?.sampleId ?? null,
              label: d.label ?? null,
              message: d.message,
              line: formatDifference(d),
            })),
          }) + '\n',
        );
        io.exit(code);
        return;
      }
      if (n > 0) stdout(report.differences.map(formatDifference).join('\n') + '\n');
      if (!opts.quiet) {
        const digest =
          report.digestMatches === undefined
            ? 'the integrity digest could not be checked'
            : report.digestMatches
              ? 'the integrity digest matches'
              : 'the integrity digest does not match';
        stderr(
          n === 0
            ? `phasebook verify: ${workbook}: untouched: ${report.rows} rows recomputed, every cell matches; ${digest}\n`
            : `phasebook verify: ${workbook}: ${n} difference${n === 1 ? '' : 's'}; ${digest}\n`,
        );
      }
      io.exit(n === 0 ? EXIT.ok : EXIT.findings);
    });
}
