/**
 * Test helper (plain JavaScript: tests/fixtures/broken/make-corpus.mjs runs under Node
 * without a TypeScript step; zip.d.mts gives the types): build small zip archives byte by byte, including dishonest ones
 * (a central directory that states a size the data does not have).
 *
 * Layout per PKWARE APPNOTE.TXT §4.3 (local file header 4.3.7, central
 * directory header 4.3.12, end of central directory record 4.3.16).
 */
import { createDeflateRaw, crc32, deflateRawSync } from 'node:zlib';

/** @param {readonly import('./zip.d.mts').ZipEntrySpec[]} entries */
export function buildZip(entries) {
  const locals = [];
  const centrals = [];
  let offset = 0;
  for (const e of entries) {
    const name = Buffer.from(e.name, 'utf8');
    const packed = e.packed ?? {
      bytes: deflateRawSync(e.data ?? Buffer.alloc(0)),
      size: (e.data ?? Buffer.alloc(0)).length,
      crc: crc32(e.data ?? Buffer.alloc(0)),
    };
    const size = e.statedSize ?? packed.size;

    const local = Buffer.alloc(30);
    local.writeUInt32LE(0x04034b50, 0);
    local.writeUInt16LE(20, 4); // version needed
    local.writeUInt16LE(0x0800, 6); // UTF-8 names
    local.writeUInt16LE(8, 8); // deflate
    local.writeUInt16LE(0, 10);
    local.writeUInt16LE(0x21, 12); // 1980-01-01
    local.writeUInt32LE(packed.crc >>> 0, 14);
    local.writeUInt32LE(packed.bytes.length, 18);
    local.writeUInt32LE(size, 22);
    local.writeUInt16LE(name.length, 26);
    local.writeUInt16LE(0, 28);
    locals.push(local, name, packed.bytes);

    const central = Buffer.alloc(46);
    central.writeUInt32LE(0x02014b50, 0);
    central.writeUInt16LE(20, 4); // made by
    central.writeUInt16LE(20, 6); // needed
    central.writeUInt16LE(0x0800, 8);
    central.writeUInt16LE(8, 10);
    central.writeUInt16LE(0, 12);
    central.writeUInt16LE(0x21, 14);
    central.writeUInt32LE(packed.crc >>> 0, 16);
    central.writeUInt32LE(packed.bytes.length, 20);
    central.writeUInt32LE(size, 24);
    central.writeUInt16LE(name.length, 28);
    central.writeUInt32LE(offset, 42);
    centrals.push(central, name);

    offset += local.length + name.length + packed.bytes.length;
  }
  const cd = Buffer.concat(centrals);
  const end = Buffer.alloc(22);
  end.writeUInt32LE(0x06054b50, 0);
  end.writeUInt16LE(entries.length, 8);
  end.writeUInt16LE(entries.length, 10);
  end.writeUInt32LE(cd.length, 12);
  end.writeUInt32LE(offset, 16);
  return Buffer.concat([...locals, cd, end]);
}

/** Deflate `bytes` zero bytes without holding them in memory. */
/** @param {number} bytes */
export async function deflateZeros(bytes) {
  const block = Buffer.alloc(1 << 20);
  const z = createDeflateRaw({ level: 9 });
  const out = [];
  z.on('data', (b) => out.push(b));
  const done = new Promise((resolve, reject) => {
    z.on('end', resolve);
    z.on('error', reject);
  });
  let crc = 0;
  for (let left = bytes; left > 0; left -= block.length) {
    const part = left >= block.length ? block : block.subarray(0, left);
    crc = crc32(part, crc);
    if (!z.write(part)) await new Promise((r) => z.once('drain', r));
  }
  z.end();
  await done;
  return { bytes: Buffer.concat(out), size: bytes, crc };
}
