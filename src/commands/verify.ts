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
import { StopError, fsReason } from '../errors.js';
import { EXIT, type CommandIo } from './io.js';
import { formatDifference } from '../verify/difference.js';
import { stopJson } from './recalc-json.js';
import { VERSION } from '../version.js';
import { readFile } from 'node:fs/promises';
import { SIGNATURES_SHEET, type SignatureCheck } from '../verify/signatures.js';

/** `Signatures!A5, signature by "Ada Quill, analyst" at 2026-12-04T21:00:00Z, key 3b6a…: valid, by a trusted key`. */
function signatureLine(s: SignatureCheck): string {
  const verdict = s.valid ? 'valid' : `not valid: ${s.problem}`;
  const trust = s.trusted === undefined ? '' : s.trusted ? ', by a trusted key' : ', by a key not given with --trust';
  return `${SIGNATURES_SHEET}!${s.address}, signature by ${JSON.stringify(s.record.signer)} at ${s.record.time}, key ${s.record.fingerprint}: ${verdict}${trust}`;
}

/** "2 signatures, all valid and trusted", or how many fail and why: "2 signatures: 1 valid and trusted, 1 by a key not given with --trust". */
function signatureSummary(checks: readonly SignatureCheck[], trust: boolean): string {
  const n = checks.length;
  const plural = (k: number, word: string) => `${k} ${word}${k === 1 ? '' : 's'}`;
  const invalid = checks.filter((s) => !s.valid).length;
  const untrusted = checks.filter((s) => s.valid && s.trusted === false).length;
  const good = n - invalid - untrusted;
  if (good === n) return `${plural(n, 'signature')}, ${n === 1 ? 'valid' : 'all valid'}${trust ? ' and trusted' : ''}`;
  const parts = [
    good > 0 ? `${good} valid${trust ? ' and trusted' : ''}` : '',
    untrusted > 0 ? `${untrusted} by ${untrusted === 1 ? 'a key' : 'keys'} not given with --trust` : '',
    invalid > 0 ? `${invalid} not valid` : '',
  ].filter((p) => p !== '');
  return `${plural(n, 'signature')}: ${parts.join(', ')}`;
}

interface VerifyCliOptions {
  quiet?: boolean;
  json?: boolean;
  trust?: string[];
}

const collect = (value: string, previous: string[] = []): string[] => [...previous, value];

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
    .option('--trust <public-key.pem>', 'a public key (PEM) whose signatures are trusted; repeatable. With it, a signature by any other key fails', collect)
    .action(async (workbook: string, opts: VerifyCliOptions) => {
      let report;
      try {
        // Loaded here, not at start-up: only `verify` needs the workbook reader.
        const { verifyWorkbook } = await import('../verify/verify.js');
        const { readPublicKey, keyFingerprint } = await import('../verify/signatures.js');
        let trusted: Set<string> | undefined;
        if (opts.trust) {
          trusted = new Set();
          for (const file of opts.trust) {
            let pem: string;
            try {
              pem = await readFile(file, 'utf8');
            } catch (err) {
              throw new StopError('usage', `cannot be read (${fsReason(err)}); expected a public key given with --trust`, { file });
            }
            trusted.add(keyFingerprint(readPublicKey(pem, file)));
          }
        }
        report = await verifyWorkbook(workbook, { trusted });
      } catch (err) {
        if (!(err instanceof StopError)) throw err;
        if (opts.json) stdout(JSON.stringify(stopJson(err)) + '\n');
        stderr(`phasebook: ${err.describe()}\n`);
        io.exit(EXIT.stop);
        return;
      }
      const n = report.differences.length;
      const badSignatures = report.signatures.filter((s) => !s.valid || s.trusted === false);
      const noTrustedSignature = opts.trust !== undefined && !report.signatures.some((s) => s.valid && s.trusted);
      const code = n === 0 && badSignatures.length === 0 && !noTrustedSignature ? EXIT.ok : EXIT.findings;
      if (opts.json) {
        stdout(
          JSON.stringify({
            phasebook: VERSION,
            exit_code: code,
            workbook,
            rows: report.rows,
            untouched: n === 0,
            digest_matches: report.digestMatches ?? null,
            recomputed_cells: report.recomputedCells,
            content_sha256: report.content,
            signatures: report.signatures.map((s) => ({
              cell: s.address,
              signer: s.record.signer,
              time: s.record.time,
              key_fingerprint: s.record.fingerprint,
              valid: s.valid,
              trusted: s.trusted ?? null,
              problem: s.problem ?? null,
              line: signatureLine(s),
            })),
            sign_off: report.signOff.map((e) => ({ cell: `${e.sheet}!${e.address}`, label: e.label, text: e.text })),
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
      const lines = [
        ...report.differences.map(formatDifference),
        ...report.signatures.map(signatureLine),
        ...(noTrustedSignature ? [`${SIGNATURES_SHEET}: no valid signature by a key given with --trust`] : []),
        ...report.signOff.map((e) => `${e.sheet}!${e.address}, sign-off "${e.label}" (typed, not checked): ${JSON.stringify(e.text)}`),
      ];
      if (lines.length > 0) stdout(lines.join('\n') + '\n');
      if (!opts.quiet) {
        const digest =
          report.digestMatches === undefined
            ? 'the integrity digest could not be checked'
            : report.digestMatches
              ? 'the integrity digest matches'
              : 'the integrity digest does not match';
        const recomputed =
          report.recomputedCells > 0
            ? `; ${report.recomputedCells} formula cells had no saved result (the program that saved the workbook dropped them) and were recomputed`
            : '';
        const signed = report.signatures.length === 0 ? '' : `; ${signatureSummary(report.signatures, opts.trust !== undefined)}`;
        stderr(
          n === 0
            ? `phasebook verify: ${workbook}: untouched: ${report.rows} rows recomputed, every cell matches; ${digest}${recomputed}${signed}\n`
            : `phasebook verify: ${workbook}: ${n} difference${n === 1 ? '' : 's'}; ${digest}${recomputed}${signed}\n`,
        );
      }
      io.exit(code);
    });
}
