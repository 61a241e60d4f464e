/**
 * A zip-bomb and "is this a zip at all" guard, run before a workbook is read
 * (the worklist reader, xlsx.ts, and `verify`'s exceljs reader).
 *
 * First the central directory alone is read (yauzl, lazy entries): the entry
 * count, the sum of the stated unpacked sizes and each entry's compression ratio
 * are checked, so a bomb is refused in bounded memory before anything is
 * inflated. A directory can lie about sizes, so by default every entry is then
 * inflated once and thrown away: yauzl's `validateEntrySizes` stops a stream the
 * moment it yields more bytes than its entry stated, so the real unpacked total
 * can never exceed the checked one.
 */
import { open } from 'node:fs/promises';
import yauzl from 'yauzl';
import type { Entry, ZipFile } from 'yauzl';
import { StopError } from '../errors.js';
import { formatBytes } from '../format.js';

const MiB = 1024 * 1024;

export interface ZipGuardOptions {
  /** Largest total of unpacked entry sizes accepted, in bytes. Default 512 MiB. */
  maxUnpackedBytes?: number;
  /** Most entries accepted. Default 10 000. */
  maxEntries?: number;
  /** Largest unpacked:packed ratio accepted for an entry above `ratioFloorBytes`. Default 1000. */
  maxRatio?: number;
  /** Entries smaller than this (unpacked) are not ratio-checked. Default 1 MiB. */
  ratioFloorBytes?: number;
  /**
   * Inflate every entry (output discarded) to prove the stated sizes. Default true.
   * The worklist reader turns it off: it reads only the parts it needs, each
   * with yauzl's size validation, which stops a part at the size it states.
   */
  verifyData?: boolean;
}

export interface ZipSummary {
  entries: number;
  /** Sum of the entries' unpacked sizes, as checked. */
  unpackedBytes: number;
}

/** Throws StopError('input') when `path` is not a zip archive or would unpack too large. */
export async function checkZip(path: string, options: ZipGuardOptions = {}): Promise<ZipSummary> {
  const maxUnpacked = options.maxUnpackedBytes ?? 512 * MiB;
  const maxEntries = options.maxEntries ?? 10_000;
  const maxRatio = options.maxRatio ?? 1000;
  const ratioFloor = options.ratioFloorBytes ?? MiB;
  const verifyData = options.verifyData ?? true;

  const notReadable = (reason: string) =>
    new StopError('input', `is not a readable XLSX workbook: ${reason}`, { file: path });
  const bomb = (reason: string) =>
    new StopError('input', `was refused as a possible zip bomb: ${reason}`, { file: path });

  let zip: ZipFile;
  try {
    zip = await yauzl.openPromise(path, { lazyEntries: true, autoClose: false, validateEntrySizes: true });
  } catch (err) {
    const why = (await startsLikeZip(path))
      ? `the zip archive is damaged or cut short (${errorText(err)})`
      : `it is not a zip archive (${errorText(err)})`;
    throw notReadable(why);
  }

  try {
    if (zip.entryCount > maxEntries) {
      throw bomb(`it holds ${zip.entryCount} entries, more than the ${maxEntries} accepted`);
    }
    const entries: Entry[] = [];
    let total = 0;
    try {
      for await (const entry of zip.eachEntry()) {
        entries.push(entry);
        total += entry.uncompressedSize;
        if (total > maxUnpacked) {
          throw bomb(`its entries would unpack to more than ${formatBytes(maxUnpacked)} (--max-unpacked); raise --max-unpacked if the workbook is genuine`);
        }
        const ratio = entry.uncompressedSize / Math.max(entry.compressedSize, 1);
        if (entry.uncompressedSize > ratioFloor && ratio > maxRatio) {
          throw bomb(
            `entry "${entry.fileName}" would unpack ${formatBytes(entry.compressedSize)} into ` +
              `${formatBytes(entry.uncompressedSize)} (ratio ${Math.round(ratio)}:1, at most ${maxRatio}:1 accepted)`,
          );
        }
      }
    } catch (err) {
      if (err instanceof StopError) throw err;
      throw notReadable(`its zip directory is damaged (${errorText(err)})`);
    }

    if (verifyData) {
      for (const entry of entries) {
        if (entry.fileName.endsWith('/')) continue; // a folder entry carries no data
        try {
          const stream = await zip.openReadStreamPromise(entry);
          for await (const chunk of stream) void chunk; // drain; yauzl counts the bytes
        } catch (err) {
          const text = errorText(err);
          if (/too many bytes/.test(text)) {
            throw bomb(`entry "${entry.fileName}" unpacks to more than the ${formatBytes(entry.uncompressedSize)} it states`);
          }
          throw notReadable(`entry "${entry.fileName}" cannot be unpacked (${text})`);
        }
      }
    }
    return { entries: entries.length, unpackedBytes: total };
  } finally {
    zip.close();
  }
}

/** True when the file begins with a zip local-file signature "PK\x03\x04". */
async function startsLikeZip(path: string): Promise<boolean> {
  try {
    const fh = await open(path, 'r');
    try {
      const buf = Buffer.alloc(4);
      const { bytesRead } = await fh.read(buf, 0, 4, 0);
      return bytesRead === 4 && buf.readUInt32LE(0) === 0x04034b50;
    } finally {
      await fh.close();
    }
  } catch {
    return false;
  }
}

function errorText(err: unknown): string {
  return err instanceof Error ? err.message : String(err);
}
