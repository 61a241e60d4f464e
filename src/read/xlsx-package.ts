/**
 * The parts of an XLSX package (a zip of XML parts), each streamed through an
 * evented XML parser (saxes) so that no part is ever held whole in memory.
 *
 * The zip guard (zip-guard.ts) has checked the central directory first; parts
 * are opened with yauzl's `validateEntrySizes`, so a part that inflates past
 * the size its directory entry states is stopped at that point (the guard's
 * checked total holds for the bytes really read).
 */
import yauzl from 'yauzl';
import type { Entry, ZipFile } from 'yauzl';
import { SaxesParser } from 'saxes';
import { StopError } from '../errors.js';
import { formatBytes } from '../format.js';

/**
 * XML events as the handlers see them: an element's local name (no prefix) and
 * its attributes as written (SpreadsheetML's own attributes carry no prefix;
 * a relationship id is "r:id" or another prefix, see `prefixedAttribute`).
 */
export interface XmlHandlers {
  open(name: string, attributes: Record<string, string>, selfClosing: boolean): void;
  close(name: string): void;
  text(text: string): void;
}

export class XlsxPackage {
  private constructor(
    readonly path: string,
    private readonly zip: ZipFile,
    /** Entries by part name, lower case, no leading "/" (OPC part names ignore case). */
    private readonly entries: Map<string, Entry>,
  ) {}

  static async open(path: string): Promise<XlsxPackage> {
    let zip: ZipFile;
    try {
      zip = await yauzl.openPromise(path, { lazyEntries: true, autoClose: false, validateEntrySizes: true });
    } catch (err) {
      throw new StopError('input', `is not a readable XLSX workbook: the zip archive is damaged (${errorText(err)})`, { file: path });
    }
    const entries = new Map<string, Entry>();
    try {
      for await (const entry of zip.eachEntry()) {
        if (!entry.fileName.endsWith('/')) entries.set(partKey(entry.fileName), entry);
      }
    } catch (err) {
      zip.close();
      throw new StopError('input', `is not a readable XLSX workbook: its zip directory is damaged (${errorText(err)})`, { file: path });
    }
    return new XlsxPackage(path, zip, entries);
  }

  has(part: string): boolean {
    return this.entries.has(partKey(part));
  }

  /** Unpacked size of a part as its directory entry states it (checked by the guard). */
  size(part: string): number {
    return this.entries.get(partKey(part))?.uncompressedSize ?? 0;
  }

  close(): void {
    this.zip.close();
  }

  /**
   * Stream part `part` (a name such as "xl/workbook.xml") through `handlers`.
   * A handler may throw (a StopError) to stop reading. Element names keep no
   * namespace prefix ("x:row" is "row"), as some writers prefix the
   * spreadsheet namespace.
   */
  async parse(part: string, handlers: XmlHandlers): Promise<void> {
    const entry = this.entries.get(partKey(part));
    if (!entry) throw this.damaged(`the part "${part}" is missing`);
    const parser = new SaxesParser({ position: false });
    let xmlError: Error | null = null;
    parser.on('error', (err) => {
      xmlError ??= err;
    });
    parser.on('opentag', (tag) => handlers.open(localName(tag.name), tag.attributes as Record<string, string>, tag.isSelfClosing));
    parser.on('closetag', (tag) => handlers.close(localName(tag.name)));
    parser.on('text', (text) => handlers.text(text));
    parser.on('cdata', (text) => handlers.text(text));

    let stream: NodeJS.ReadableStream;
    try {
      stream = await this.zip.openReadStreamPromise(entry);
    } catch (err) {
      throw this.damaged(`the part "${part}" cannot be unpacked (${errorText(err)})`);
    }
    const decoder = new TextDecoder('utf-8', { fatal: true });
    try {
      for await (const chunk of stream) {
        let text: string;
        try {
          text = decoder.decode(chunk as Buffer, { stream: true });
        } catch {
          throw this.damaged(`the part "${part}" is not UTF-8 text`);
        }
        parser.write(text);
        if (xmlError) throw this.notXml(part, xmlError);
      }
      parser.close();
      if (xmlError) throw this.notXml(part, xmlError);
    } catch (err) {
      (stream as unknown as { destroy(): void }).destroy();
      if (err instanceof StopError) throw err;
      const text = errorText(err);
      if (/too many bytes/.test(text)) {
        throw new StopError(
          'input',
          `was refused as a possible zip bomb: entry "${entry.fileName}" unpacks to more than the ${formatBytes(entry.uncompressedSize)} it states`,
          { file: this.path },
        );
      }
      throw this.damaged(`the part "${part}" cannot be unpacked (${text})`);
    }
  }

  damaged(reason: string): StopError {
    return new StopError('input', `is not a readable XLSX workbook: ${reason}; expected a workbook as a spreadsheet program saves it`, { file: this.path });
  }

  private notXml(part: string, err: Error): StopError {
    return this.damaged(`the part "${part}" is not well-formed XML (${err.message.split('\n')[0]!.replace(/\.$/, '')})`);
  }
}

function partKey(name: string): string {
  return name.replace(/^\/+/, '').toLowerCase();
}

function localName(name: string): string {
  const i = name.indexOf(':');
  return i < 0 ? name : name.slice(i + 1);
}

/** The value of an attribute with a namespace prefix, by its local name ("id" finds "r:id"). */
export function prefixedAttribute(attributes: Record<string, string>, local: string): string | undefined {
  for (const key in attributes) if (key.endsWith(`:${local}`)) return attributes[key];
  return undefined;
}

function errorText(err: unknown): string {
  return err instanceof Error ? err.message : String(err);
}

/**
 * Resolve a relationship target against the part that holds the relationship
 * (ECMA-376 Part 2, §9.3: a relative reference is resolved against the source
 * part's folder; one starting with "/" is from the package root).
 */
export function resolvePart(sourcePart: string, target: string): string {
  const base = target.startsWith('/') ? [] : sourcePart.replace(/^\/+/, '').split('/').slice(0, -1);
  for (const seg of target.replace(/^\/+/, '').split('/')) {
    if (seg === '..') base.pop();
    else if (seg !== '.' && seg !== '') base.push(seg);
  }
  return base.join('/');
}

/** The relationships part of a part: "xl/workbook.xml" → "xl/_rels/workbook.xml.rels". */
export function relsPartOf(part: string): string {
  const i = part.lastIndexOf('/');
  return `${part.slice(0, i + 1)}_rels/${part.slice(i + 1)}.rels`;
}

export interface Relationship {
  id: string;
  /** Last segment of the relationship type ("worksheet", "sharedStrings", "styles", "officeDocument"). */
  type: string;
  /** The target part, resolved to a package path (no leading "/"). */
  part: string;
  external: boolean;
}

/** The relationships of `sourcePart` ("" for the package), or none when it has no rels part. */
export async function readRelationships(pkg: XlsxPackage, sourcePart: string): Promise<Relationship[]> {
  const relsPart = sourcePart === '' ? '_rels/.rels' : relsPartOf(sourcePart);
  if (!pkg.has(relsPart)) return [];
  const out: Relationship[] = [];
  await pkg.parse(relsPart, {
    open(name, a) {
      if (name !== 'Relationship' || a.Id === undefined || a.Target === undefined) return;
      const external = a.TargetMode === 'External';
      out.push({
        id: a.Id,
        type: (a.Type ?? '').slice((a.Type ?? '').lastIndexOf('/') + 1),
        part: external ? a.Target : resolvePart(sourcePart === '' ? '/' : sourcePart, decodeURI(a.Target)),
        external,
      });
    },
    close() {},
    text() {},
  });
  return out;
}
