import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { checkZip } from '../../src/read/zip-guard.js';
import { buildZip, deflateZeros } from '../helpers/zip.mjs';
import { stopOf } from '../helpers/stop.js';

const MiB = 1024 * 1024;
let dir: string;

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'phasebook-zip-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

async function file(name: string, bytes: Buffer | string): Promise<string> {
  const p = join(dir, name);
  await writeFile(p, bytes);
  return p;
}


describe('checkZip accepts honest archives', () => {
  it('sums entries and unpacked sizes of a small honest zip', async () => {
    // Structure per PKWARE APPNOTE.TXT; sizes are the byte lengths written.
    const p = await file(
      'ok.zip',
      buildZip([
        { name: 'a.txt', data: Buffer.from('hello') },
        { name: 'b/c.xml', data: Buffer.from('<x/>'.repeat(100)) },
      ]),
    );
    await expect(checkZip(p)).resolves.toEqual({ entries: 2, unpackedBytes: 5 + 400 });
  });
});

describe('checkZip refuses', () => {
  it.each([
    {
      name: 'a directory stating ~4 GiB for one entry (refused from the directory alone)',
      build: async () => buildZip([{ name: 'xl/worksheets/sheet1.xml', data: Buffer.from('<x/>'), statedSize: 0xfffffff0 }]),
      options: {},
      message: /was refused as a possible zip bomb: its entries would unpack to more than 512 MiB/,
    },
    {
      name: 'many entries that together pass the unpacked limit',
      build: async () =>
        buildZip(
          Array.from({ length: 5 }, (_, i) => ({ name: `p${i}.xml`, data: Buffer.from('x'), statedSize: 200 * MiB })),
        ),
      options: { maxRatio: Infinity }, // so that the total, not the ratio, is what refuses
      message: /its entries would unpack to more than 512 MiB/,
    },
    {
      name: 'real zeros: 8 MiB unpacked against a 4 MiB limit',
      build: async () => buildZip([{ name: 'zeros.bin', packed: await deflateZeros(8 * MiB) }]),
      options: { maxUnpackedBytes: 4 * MiB },
      message: /its entries would unpack to more than 4 MiB/,
    },
    {
      name: 'real zeros: a compression ratio above the accepted one',
      build: async () => buildZip([{ name: 'zeros.bin', packed: await deflateZeros(8 * MiB) }]),
      options: { maxRatio: 100 },
      message: /entry "zeros.bin" would unpack .* into 8 MiB \(ratio \d+:1, at most 100:1 accepted\)/,
    },
    {
      name: 'a directory that understates: 8 MiB of data stated as 1000 bytes (caught while inflating)',
      build: async () => buildZip([{ name: 'liar.bin', packed: { ...(await deflateZeros(8 * MiB)), size: 1000 }, statedSize: 1000 }]),
      options: {},
      message: /entry "liar.bin" unpacks to more than the 1000 bytes it states/,
    },
    {
      name: 'more entries than accepted',
      build: async () => buildZip(Array.from({ length: 5 }, (_, i) => ({ name: `e${i}`, data: Buffer.from('x') }))),
      options: { maxEntries: 3 },
      message: /it holds 5 entries, more than the 3 accepted/,
    },
    {
      name: 'text that is not a zip at all',
      build: async () => Buffer.from('sample_id,conc\nA,1\n'),
      options: {},
      message: /is not a readable XLSX workbook: it is not a zip archive/,
    },
    {
      name: 'a zip cut short (no end of central directory)',
      build: async () => buildZip([{ name: 'a.txt', data: Buffer.from('hello world '.repeat(50)) }]).subarray(0, 40),
      options: {},
      message: /is not a readable XLSX workbook: the zip archive is damaged or cut short/,
    },
  ])('$name', async ({ build, options, message }) => {
    const p = await file('case.zip', await build());
    const err = await stopOf(checkZip(p, options));
    expect(err.kind).toBe('input');
    expect(err.message).toMatch(message);
    expect(err.location.file).toBe(p);
    expect(err.describe().startsWith(p)).toBe(true);
  });

  it('does not inflate when verifyData is off, so an understated size passes (documents the default)', async () => {
    const p = await file('liar2.zip', buildZip([{ name: 'liar.bin', packed: { ...(await deflateZeros(2 * MiB)), size: 10 }, statedSize: 10 }]));
    await expect(checkZip(p, { verifyData: false })).resolves.toEqual({ entries: 1, unpackedBytes: 10 });
    await expect(checkZip(p)).rejects.toThrow(/unpacks to more than the 10 bytes it states/);
  });
});
