/**
 * Signatures (src/verify/signatures.ts): the Ed25519 primitive against RFC 8032's test
 * vectors, keys made by openssl, fingerprints as openssl computes them, chained
 * signatures, and each way a signature stops holding; the canonical numbers and
 * formulas (src/write/workbook/canonical.ts) the signed content is made of.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { createHash, createPrivateKey, createPublicKey, sign, verify } from 'node:crypto';
import { readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { StopError } from '../../src/errors.js';
import { readStoredWorkbook } from '../../src/verify/read.js';
import { writeWithSignatures } from '../../src/verify/signatures-sheet.js';
import {
  SIGNATURES_SHEET,
  checkSignatures,
  contentDigest,
  keyFingerprint,
  makeSignature,
  readPrivateKey,
  readPublicKey,
  readSignatures,
  type SignatureRecord,
} from '../../src/verify/signatures.js';
import { verifyWorkbook } from '../../src/verify/verify.js';
import { canonicalFormula, canonicalNumber } from '../../src/write/workbook/canonical.js';
import { SAMPLE_CASES, editCopy, rowWith, tempDir, unzipParts, writeCase } from './workbook-fixtures.js';
import { skipWithout } from '../helpers/tools.js';

/** The openssl command line makes the keys, as a signer would (.ci/run installs it). */
const noOpenssl = skipWithout('openssl', spawnSync('openssl', ['version'], { stdio: 'ignore' }).status === 0);

const dir = tempDir('phasebook-sign-');
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** An Ed25519 key pair made by openssl (`openssl genpkey -algorithm ed25519`), as PEM files. */
function opensslKey(name: string): { key: string; pub: string } {
  const key = join(dir, `${name}.pem`);
  const pub = join(dir, `${name}.pub.pem`);
  execFileSync('openssl', ['genpkey', '-algorithm', 'ed25519', '-out', key]);
  execFileSync('openssl', ['pkey', '-in', key, '-pubout', '-out', pub]);
  return { key, pub };
}

// RFC 8032, section 7.1 "Test Vectors for Ed25519", TEST 1, TEST 2 and TEST 3 (SECRET KEY, PUBLIC KEY,
// MESSAGE, SIGNATURE), written here from the RFC.
const RFC8032 = [
  {
    name: 'TEST 1',
    secret: '9d61b19deffd5a60ba844af492ec2cc44449c5697b326919703bac031cae7f60',
    public: 'd75a980182b10ab7d54bfed3c964073a0ee172f3daa62325af021a68f707511a',
    message: '',
    signature:
      'e5564300c360ac729086e2cc806e828a84877f1eb8e5d974d873e065224901555fb8821590a33bacc61e39701cf9b46bd25bf5f0595bbe24655141438e7a100b',
  },
  {
    name: 'TEST 2',
    secret: '4ccd089b28ff96da9db6c346ec114e0f5b8a319f35aba624da8cf6ed4fb8a6fb',
    public: '3d4017c3e843895a92b70aa74d1b7ebc9c982ccf2ec4968cc0cd55f12af4660c',
    message: '72',
    signature:
      '92a009a9f0d4cab8720e820b5f642540a2b27b5416503f8fb3762223ebdb69da085ac1e43e15996e458f3613d0f11d8c387b2eaeb4302aeeb00d291612bb0c00',
  },
  {
    name: 'TEST 3',
    secret: 'c5aa8df43f9f837bedb7442f31dcb7b166d38535076f094b85ce3a2e0b4458f7',
    public: 'fc51cd8e6218a1a38da47ed00230f0580816ed13ba3303ac5deb911548908025',
    message: 'af82',
    signature:
      '6291d657deec24024827e69c3abe01a30ce548a284743a445e3680d7db5ac3ac18ff9b538d16f290ae67f760984dc6594a7c15e9716ed28dc027beceea1ec40a',
  },
];

// The fixed prefixes of an Ed25519 key in PKCS#8 and SubjectPublicKeyInfo DER (RFC 8410, sections 7 and 4).
const PKCS8_PREFIX = '302e020100300506032b657004220420';
const SPKI_PREFIX = '302a300506032b6570032100';

describe('the Ed25519 primitive (node:crypto) against RFC 8032, section 7.1', () => {
  it.each(RFC8032.map((v) => [v.name, v] as const))('%s: the public key, the signature, and its verification', (_name, v) => {
    const key = createPrivateKey({ key: Buffer.from(PKCS8_PREFIX + v.secret, 'hex'), format: 'der', type: 'pkcs8' });
    const pub = createPublicKey(key);
    expect(pub.export({ type: 'spki', format: 'der' }).toString('hex')).toBe(SPKI_PREFIX + v.public);
    const signature = sign(null, Buffer.from(v.message, 'hex'), key);
    expect(signature.toString('hex')).toBe(v.signature);
    expect(verify(null, Buffer.from(v.message, 'hex'), pub, Buffer.from(v.signature, 'hex'))).toBe(true);
    // One bit of the message changed: the signature no longer holds.
    expect(verify(null, Buffer.from(`${v.message}00`, 'hex'), pub, Buffer.from(v.signature, 'hex'))).toBe(false);
  });
});

describe.skipIf(noOpenssl)('keys', () => {
  it('a key made by openssl: its fingerprint is the SHA-256 of the SubjectPublicKeyInfo DER, as openssl writes it', () => {
    const { key, pub } = opensslKey('fingerprint');
    const der = execFileSync('openssl', ['pkey', '-in', key, '-pubout', '-outform', 'DER']);
    const fromOpenssl = createHash('sha256').update(der).digest('hex');
    expect(keyFingerprint(readPublicKey(readFileSync(pub, 'utf8'), pub))).toBe(fromOpenssl);
    expect(keyFingerprint(createPublicKey(readPrivateKey(readFileSync(key, 'utf8'), key)))).toBe(fromOpenssl);
  });

  it.each([
    ['not a key', 'hello\n', /^k\.pem: is not a private key in PEM form .*; expected an Ed25519 key as "openssl genpkey -algorithm ed25519" writes it$/],
    ['an RSA key', 'rsa', /^k\.pem: holds a private key of type "rsa"; expected an Ed25519 key$/],
  ])('%s is refused with a message', (_name, text, message) => {
    const pem = text === 'rsa' ? execFileSync('openssl', ['genpkey', '-algorithm', 'RSA', '-pkeyopt', 'rsa_keygen_bits:1024']).toString() : text;
    let err: unknown;
    try {
      readPrivateKey(pem, 'k.pem');
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(StopError);
    expect((err as StopError).describe()).toMatch(message);
  });
});

describe.skipIf(noOpenssl)('signatures over a workbook', () => {
  let workbook: string;
  let a: { key: string; pub: string };
  let b: { key: string; pub: string };
  const privateKey = (k: { key: string }) => readPrivateKey(readFileSync(k.key, 'utf8'), k.key);
  const fingerprint = (k: { pub: string }) => keyFingerprint(readPublicKey(readFileSync(k.pub, 'utf8'), k.pub));

  beforeAll(async () => {
    workbook = (await writeCase(SAMPLE_CASES[0]!, dir, { file: 'signed.xlsx' })).path;
    a = opensslKey('analyst');
    b = opensslKey('reviewer');
  });

  async function signTwice(path: string): Promise<SignatureRecord[]> {
    const content = contentDigest(await readStoredWorkbook(path));
    const first = makeSignature(content, [], { key: privateKey(a), signer: 'Ada Quill, analyst', time: '2026-11-21T09:00:00Z' });
    const second = makeSignature(content, [first], { key: privateKey(b), signer: 'Bo Reyes, reviewer', time: '2026-11-21T10:30:00Z' });
    return [first, second];
  }

  it('two chained signatures, written on the Signatures sheet, both hold; the sheet is not part of the content', async () => {
    const signed = join(dir, 'two.xlsx');
    const records = await signTwice(workbook);
    await writeWithSignatures(workbook, signed, records);
    const stored = await readStoredWorkbook(signed);
    expect(stored.order.at(-1)).toBe(SIGNATURES_SHEET);
    expect(contentDigest(stored)).toBe(contentDigest(await readStoredWorkbook(workbook)));
    const trusted = new Set([fingerprint(a), fingerprint(b)]);
    const checks = checkSignatures(contentDigest(stored), readSignatures(stored.sheet(SIGNATURES_SHEET)), trusted);
    expect(checks.map((c) => [c.address, c.record.signer, c.valid, c.trusted])).toEqual([
      ['A5', 'Ada Quill, analyst', true, true],
      ['A6', 'Bo Reyes, reviewer', true, true],
    ]);
    // The workbook itself still verifies: the Signatures sheet may follow the others.
    const report = await verifyWorkbook(signed, { trusted: new Set([fingerprint(a)]) });
    expect(report.differences).toEqual([]);
    expect(report.signatures.map((s) => [s.valid, s.trusted])).toEqual([
      [true, true],
      [true, false],
    ]);
  });

  it('the Signatures sheet is added without touching any other part: only the sheet list, its relationships and content types change', async () => {
    const signed = join(dir, 'parts.xlsx');
    await writeWithSignatures(workbook, signed, (await signTwice(workbook)).slice(0, 1));
    const before = await unzipParts(workbook);
    const after = await unzipParts(signed);
    const changed = [...before].filter(([name, bytes]) => !after.get(name)?.equals(bytes)).map(([name]) => name);
    expect(changed.sort()).toEqual(['[Content_Types].xml', 'xl/_rels/workbook.xml.rels', 'xl/workbook.xml']);
    const added = [...after.keys()].filter((name) => !before.has(name));
    expect(added).toEqual(['xl/worksheets/sheet8.xml']);
    expect(after.get('xl/workbook.xml')!.toString('utf8')).toMatch(/<sheet xmlns:r="[^"]+" name="Signatures" sheetId="8" r:id="rIdPhasebookSignatures"\/><\/sheets>/);
  });

  it('the content changed after signing: every signature fails and says why', async () => {
    const signed = join(dir, 'changed.xlsx');
    await writeWithSignatures(workbook, signed, await signTwice(workbook));
    const changed = join(dir, 'changed-after.xlsx');
    await editCopy(signed, changed, (wb) => {
      wb.getWorksheet('Results')!.getCell('G7').value = 900;
    });
    const report = await verifyWorkbook(changed);
    expect(report.signatures.map((s) => [s.valid, s.problem])).toEqual([
      [false, 'it does not match the content and the signatures before it (changed since it was signed?)'],
      [false, 'it does not match the content and the signatures before it (changed since it was signed?)'],
    ]);
  });

  it('an earlier signature removed: the later one, which signed it, fails; a sign-off typed in is not content', async () => {
    const [first, second] = await signTwice(workbook);
    const content = contentDigest(await readStoredWorkbook(workbook));
    const listed = [{ record: second!, row: 5 }];
    expect(checkSignatures(content, listed)[0]!.valid).toBe(false);
    // A signer's name changed on the sheet: its signature fails.
    const renamed = [{ record: { ...first!, signer: 'Someone Else' }, row: 5 }];
    expect(checkSignatures(content, renamed)[0]!.valid).toBe(false);
    // A public key swapped for another with the fingerprint kept: the fingerprint no longer fits.
    const otherKey = createPublicKey(privateKey(b)).export({ type: 'spki', format: 'der' }).toString('base64');
    const swapped = checkSignatures(content, [{ record: { ...first!, publicKey: otherKey }, row: 5 }])[0]!;
    expect(swapped.problem).toBe('its public key does not have the fingerprint it states');

    const typed = join(dir, 'typed-sign-off.xlsx');
    await editCopy(workbook, typed, (wb) => {
      const ws = wb.getWorksheet('Provenance')!;
      ws.getCell(rowWith(ws, 'reviewed by'), 2).value = 'B. Reyes';
    });
    expect(contentDigest(await readStoredWorkbook(typed))).toBe(content);
  });
});

describe('canonical content', () => {
  // 15 significant digits, as spreadsheet programs save a number (common practice); 89.18202590278685 is
  // saved by LibreOffice 7 as 89.1820259027869 (measured in this project's round-trip tests).
  it.each([
    [0.11800000000000001, 0.118],
    [0.1 + 0.2, 0.3],
    [-(0.1 + 0.2), -0.3],
    [999.9999999999999, 1000],
    [89.18202590278685, 89.1820259027869],
    [123456789012345678, 123456789012346000],
    [0.123456789012345, 0.123456789012345],
    [-0, 0],
    [1000, 1000],
  ])('canonicalNumber(%s) is %s', (x, want) => {
    expect(Object.is(canonicalNumber(x), want)).toBe(true);
    expect(canonicalNumber(canonicalNumber(x))).toBe(want); // a saved value maps to itself
  });

  it.each([
    ['=IF(A2 = "", FALSE(), A2)', 'IF(A2="",FALSE,A2)'],
    ["'Method'!$a$38+sum(b2:b3)", 'METHOD!$A$38+SUM(B2:B3)'],
    ["'QC data'!A1&\"a b\"", "'QC DATA'!A1&\"a b\""],
    ['_xlfn.IFERROR(B2*1.0000000000000002,"x")', 'IFERROR(B2*1,"x")'],
  ])('canonicalFormula(%j) is %j', (f, want) => {
    expect(canonicalFormula(f)).toBe(want);
  });
});
