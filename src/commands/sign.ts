/**
 * `phasebook sign WORKBOOK --key KEY.pem --signer "Name, role"`: add an Ed25519
 * signature over the workbook's canonical content and the signatures before it
 * (verify/signatures.ts) to its Signatures sheet, in place and all or nothing.
 *
 * Only a workbook that verifies is signed: a signature says "this is what
 * phasebook wrote, and I stand by it", so a changed cell or a broken signature
 * stops the command (exit 2) with the way to see why.
 */
import { createPublicKey } from 'node:crypto';
import { readFile } from 'node:fs/promises';
import type { Command } from 'commander';
import { StopError, fsReason } from '../errors.js';
import { EXIT, type CommandIo } from './io.js';

interface SignCliOptions {
  key: string;
  signer: string;
}

/** An ISO 8601 UTC time to the second ("2026-12-04T21:00:00Z"). */
function utcNow(): string {
  return new Date().toISOString().replace(/\.\d{3}Z$/, 'Z');
}

export function registerSignCommand(program: Command, io: CommandIo): void {
  const stderr = io.stderr ?? ((t: string) => void process.stderr.write(t));
  program
    .command('sign')
    .description("sign a phasebook workbook that verifies: an Ed25519 signature over its content and earlier signatures, recorded on its Signatures sheet")
    .argument('<workbook>', 'workbook (.xlsx) written by "phasebook recalc"; changed in place')
    .requiredOption('--key <file>', 'Ed25519 private key, PKCS#8 PEM (as "openssl genpkey -algorithm ed25519" writes it)')
    .requiredOption('--signer <text>', 'who signs, in words (e.g. "Ada Quill, reviewer")')
    .action(async (workbook: string, opts: SignCliOptions) => {
      try {
        const signer = opts.signer.trim();
        if (signer === '') throw new StopError('usage', 'option "--signer": expected a name, got ""');
        let pem: string;
        try {
          pem = await readFile(opts.key, 'utf8');
        } catch (err) {
          throw new StopError('usage', `cannot be read (${fsReason(err)}); expected the signer's private key`, { file: opts.key });
        }
        // Loaded here, not at start-up: only `sign` and `verify` need the workbook reader.
        const { readPrivateKey, makeSignature, keyFingerprint } = await import('../verify/signatures.js');
        const key = readPrivateKey(pem, opts.key);
        const { verifyWorkbook } = await import('../verify/verify.js');
        const report = await verifyWorkbook(workbook);
        const n = report.differences.length;
        if (n > 0) {
          throw new StopError(
            'input',
            `was not signed: it does not verify (${n} difference${n === 1 ? '' : 's'}); run "phasebook verify ${workbook}" to see them`,
            { file: workbook },
          );
        }
        const broken = report.signatures.filter((s) => !s.valid);
        if (broken.length > 0) {
          throw new StopError(
            'input',
            `was not signed: the signature of ${JSON.stringify(broken[0]!.record.signer)} (Signatures!${broken[0]!.address}) does not hold: ${broken[0]!.problem}`,
            { file: workbook },
          );
        }
        const earlier = report.signatures.map((s) => s.record);
        const record = makeSignature(report.content, earlier, { key, signer, time: utcNow() });
        const { writeWithSignatures } = await import('../verify/signatures-sheet.js');
        const { writeFileAtomic } = await import('../write/atomic.js');
        await writeFileAtomic(workbook, (tmp) => writeWithSignatures(workbook, tmp, [...earlier, record]), { force: true });
        stderr(
          `phasebook sign: ${workbook}: signed by ${JSON.stringify(signer)} at ${record.time} with the key ${keyFingerprint(createPublicKey(key))} ` +
            `(signature ${earlier.length + 1} on the Signatures sheet)\n`,
        );
        io.exit(EXIT.ok);
      } catch (err) {
        if (!(err instanceof StopError)) throw err;
        stderr(`phasebook: ${err.describe()}\n`);
        io.exit(EXIT.stop);
      }
    });
}
