/**
 * Signatures over a workbook's canonical content (`phasebook sign`, checked by
 * `phasebook verify`).
 *
 * The content: every cell of every sheet but the Signatures sheet, in workbook
 * order, as canonical.ts defines it (numbers to 15 significant digits, formulas by
 * meaning and never their cached results), leaving out the sign-off cells the
 * reviewer types into. Its SHA-256 is what a spreadsheet program that opens and
 * saves the workbook unchanged keeps.
 *
 * A signature is Ed25519 (RFC 8032; node:crypto) over, one line each:
 *   `phasebook signature 1`
 *   `content <SHA-256 of the content, hex>`
 *   for each signature before it, in order: `signed <JSON [signer, time, fingerprint, signature]>`
 *   `signer <JSON signer>`, `time <UTC time>`, `key <fingerprint>`
 * so each signs the content and the signatures before it. The key's fingerprint is
 * the SHA-256 of its public key as SubjectPublicKeyInfo DER, in hex.
 */
import { createHash, createPrivateKey, createPublicKey, sign, verify, type KeyObject } from 'node:crypto';
import { StopError } from '../errors.js';
import { canonicalCell } from '../write/workbook/canonical.js';
import { columnLetter } from '../write/workbook/cells.js';
import { PROVENANCE_SHEET, SIGN_OFF_KEYS } from '../write/workbook/provenance-sheet.js';
import type { StoredSheet, StoredWorkbook } from './read.js';

export const SIGNATURES_SHEET = 'Signatures';
export const SIGNATURES_TITLE = 'phasebook signatures';
export const SIGNATURES_FORMAT = 'signatures 1';
const MESSAGE_HEADER = 'phasebook signature 1';
export const SIGNATURE_HEADERS = [
  'signer',
  'signed at (UTC)',
  'key fingerprint (SHA-256 of the public key, SubjectPublicKeyInfo DER, hex)',
  'public key (SubjectPublicKeyInfo DER, base64)',
  'signature (Ed25519, base64)',
] as const;
export const SIGNATURES_EXPLANATION =
  'Each signature is Ed25519 over the workbook\'s content (every cell of every other sheet, numbers to 15 significant digits, ' +
  'formulas by meaning without their cached results, the sign-off cells left out) and the signatures above it. phasebook verify checks them.';

export interface SignatureRecord {
  signer: string;
  /** ISO 8601 UTC time. */
  time: string;
  /** SHA-256 of the public key's SubjectPublicKeyInfo DER, hex. */
  fingerprint: string;
  /** The public key, SubjectPublicKeyInfo DER, base64. */
  publicKey: string;
  /** The Ed25519 signature, base64. */
  signature: string;
}

/** Cells left out of the content: column B of the Provenance sheet's sign-off lines. */
function signOffCells(stored: StoredWorkbook): Set<string> {
  const out = new Set<string>();
  const provenance = stored.sheet(PROVENANCE_SHEET);
  if (!provenance) return out;
  const keys = new Set<string>(SIGN_OFF_KEYS);
  for (let r = 1; r <= provenance.lastRow; r++) {
    const key = provenance.row(r).get(1)?.value;
    if (typeof key === 'string' && keys.has(key)) out.add(`B${r}`);
  }
  return out;
}

/** SHA-256 (hex) of the workbook's canonical content. */
export function contentDigest(stored: StoredWorkbook): string {
  const hash = createHash('sha256');
  const free = signOffCells(stored);
  for (const name of stored.order) {
    if (name === SIGNATURES_SHEET) continue;
    const sheet = stored.sheet(name)!;
    hash.update(`sheet ${JSON.stringify(name)}\n`, 'utf8');
    let pending = '';
    for (let r = 1; r <= sheet.lastRow; r++) {
      const cells = sheet.row(r);
      if (cells.size === 0) continue;
      for (const c of [...cells.keys()].sort((a, b) => a - b)) {
        const address = `${columnLetter(c)}${r}`;
        if (name === PROVENANCE_SHEET && free.has(address)) continue;
        const cell = cells.get(c)!;
        const content = canonicalCell(cell.value, cell.formula);
        if (content === null) continue;
        pending += `${address} ${JSON.stringify(content)}\n`;
      }
      if (pending.length > 1 << 16) {
        hash.update(pending, 'utf8');
        pending = '';
      }
    }
    hash.update(pending, 'utf8');
  }
  return hash.digest('hex');
}

/** The text a signature signs. */
export function signedMessage(content: string, earlier: readonly SignatureRecord[], next: Omit<SignatureRecord, 'signature' | 'publicKey'>): string {
  const lines = [MESSAGE_HEADER, `content ${content}`];
  for (const s of earlier) lines.push(`signed ${JSON.stringify([s.signer, s.time, s.fingerprint, s.signature])}`);
  lines.push(`signer ${JSON.stringify(next.signer)}`, `time ${next.time}`, `key ${next.fingerprint}`);
  return `${lines.join('\n')}\n`;
}

/** SHA-256 of a public key's SubjectPublicKeyInfo DER, hex. */
export function keyFingerprint(key: KeyObject): string {
  return createHash('sha256').update(key.export({ type: 'spki', format: 'der' })).digest('hex');
}

/** An Ed25519 private key from PEM text (PKCS#8, as `openssl genpkey -algorithm ed25519` writes it). */
export function readPrivateKey(pem: string, file: string): KeyObject {
  return readKey(pem, file, 'private');
}

/** An Ed25519 public key from PEM text (a public key, or the private key it belongs to). */
export function readPublicKey(pem: string, file: string): KeyObject {
  return readKey(pem, file, 'public');
}

function readKey(pem: string, file: string, kind: 'private' | 'public'): KeyObject {
  let key: KeyObject;
  try {
    key = kind === 'private' ? createPrivateKey({ key: pem, format: 'pem' }) : createPublicKey({ key: pem, format: 'pem' });
  } catch (err) {
    const writer = kind === 'private' ? 'openssl genpkey -algorithm ed25519' : 'openssl pkey -pubout';
    throw new StopError('usage', `is not a ${kind} key in PEM form (${(err as Error).message}); expected an Ed25519 key as "${writer}" writes it`, { file });
  }
  if (key.asymmetricKeyType !== 'ed25519') {
    throw new StopError('usage', `holds a ${kind} key of type "${key.asymmetricKeyType}"; expected an Ed25519 key`, { file });
  }
  return key;
}

/** A new signature after `earlier`, over `content`. */
export function makeSignature(
  content: string,
  earlier: readonly SignatureRecord[],
  options: { key: KeyObject; signer: string; time: string },
): SignatureRecord {
  const publicKey = createPublicKey(options.key);
  const fingerprint = keyFingerprint(publicKey);
  const message = signedMessage(content, earlier, { signer: options.signer, time: options.time, fingerprint });
  return {
    signer: options.signer,
    time: options.time,
    fingerprint,
    publicKey: publicKey.export({ type: 'spki', format: 'der' }).toString('base64'),
    signature: sign(null, Buffer.from(message, 'utf8'), options.key).toString('base64'),
  };
}

export interface SignatureCheck {
  record: SignatureRecord;
  /** Cell of the signature's row on the Signatures sheet ("A5"). */
  address: string;
  valid: boolean;
  /** Why it is not valid, in words. */
  problem?: string;
  /** Made by a key given with --trust (undefined when none was given). */
  trusted?: boolean;
}

/** The signatures a Signatures sheet lists, in order, with their sheet rows. */
export function readSignatures(sheet: StoredSheet | undefined): { record: SignatureRecord; row: number }[] {
  if (!sheet) return [];
  let header = 0;
  for (let r = 1; r <= sheet.lastRow && header === 0; r++) if (sheet.row(r).get(1)?.value === SIGNATURE_HEADERS[0]) header = r;
  if (header === 0) return [];
  const out: { record: SignatureRecord; row: number }[] = [];
  for (let r = header + 1; r <= sheet.lastRow; r++) {
    const cells = sheet.row(r);
    if (cells.size === 0) break;
    const text = (c: number) => {
      const v = cells.get(c)?.value;
      return v === null || v === undefined ? '' : String(v);
    };
    out.push({ record: { signer: text(1), time: text(2), fingerprint: text(3), publicKey: text(4), signature: text(5) }, row: r });
  }
  return out;
}

/** Check every signature in order against the content; `trusted` holds the fingerprints of trusted keys. */
export function checkSignatures(
  content: string,
  listed: readonly { record: SignatureRecord; row: number }[],
  trusted?: ReadonlySet<string>,
): SignatureCheck[] {
  const earlier: SignatureRecord[] = [];
  return listed.map(({ record, row }) => {
    const check: SignatureCheck = { record, address: `A${row}`, valid: false };
    if (trusted) check.trusted = trusted.has(record.fingerprint.toLowerCase());
    try {
      const key = createPublicKey({ key: Buffer.from(record.publicKey, 'base64'), format: 'der', type: 'spki' });
      if (key.asymmetricKeyType !== 'ed25519') check.problem = `its public key is of type "${key.asymmetricKeyType}", not Ed25519`;
      else if (keyFingerprint(key) !== record.fingerprint.toLowerCase()) check.problem = 'its public key does not have the fingerprint it states';
      else {
        const message = signedMessage(content, earlier, record);
        check.valid = verify(null, Buffer.from(message, 'utf8'), key, Buffer.from(record.signature, 'base64'));
        if (!check.valid) check.problem = 'it does not match the content and the signatures before it (changed since it was signed?)';
      }
    } catch {
      check.problem = 'its public key cannot be read';
    }
    earlier.push(record);
    return check;
  });
}
