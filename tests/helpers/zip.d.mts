export interface ZipEntrySpec {
  name: string;
  /** Unpacked content (ignored when `packed` is given). */
  data?: Buffer;
  /** Already deflated content, with its true unpacked size and CRC. */
  packed?: { bytes: Buffer; size: number; crc: number };
  /** Unpacked size to state in the headers instead of the true one. */
  statedSize?: number;
}

/** A zip archive (PKWARE APPNOTE.TXT §4.3), honest or stating a false unpacked size. */
export function buildZip(entries: readonly ZipEntrySpec[]): Buffer;

/** Deflate `bytes` zero bytes without holding them in memory. */
export function deflateZeros(bytes: number): Promise<{ bytes: Buffer; size: number; crc: number }>;
