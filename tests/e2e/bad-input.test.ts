/**
 * Issue 5 end to end, through the built CLI (dist/cli.js): bad input never
 * crashes, never loses a row, never lets text become code.
 *
 * The corpus is made fresh by tests/fixtures/broken/make-corpus.mjs. Every run
 * checks the exit code, the exact message (STYLE.md habit 7: file, row or line,
 * column; 1-based rows, header = row 1; no final period), that the input's
 * SHA-256 did not change, that no stack trace reached stderr, and what the out
 * folder holds afterwards (nothing after a stop; never a `.phasebook-*` temp).
 */
import { spawn } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, mkdirSync, readdirSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import ExcelJS from 'exceljs';
import Papa from 'papaparse';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ACCEPTED, ESCAPES, LARGE, ROW_DAMAGE, makeCorpus, makeLarge } from '../fixtures/broken/make-corpus.mjs';
import { CLI, ROOT, tempDir } from '../helpers/cli.js';

const GENERIC = join(ROOT, 'templates/generic-lle.yaml');
const GENERIC_TEXT = readFileSync(GENERIC, 'utf8');
const TIMESTAMP = '2026-11-20T16:00:00Z';

let dir: string;
let runs = 0;

beforeAll(async () => {
  dir = tempDir('phasebook-bad-input-');
  await makeCorpus(dir, GENERIC_TEXT);
  for (const name of Object.keys(LARGE)) await makeLarge(dir, name);
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const sha256 = (path: string) => createHash('sha256').update(readFileSync(path)).digest('hex');

interface Run {
  code: number | null;
  stderr: string;
  /** The out folder (relative to the corpus folder). */
  out: string;
  /** What the out folder holds afterwards ([] when it was never made). */
  files: string[];
  inputBefore: string;
  inputAfter: string;
}

/** CLI processes at a time: the suites below run their cases concurrently, on two cores beside other test files. */
const PARALLEL = 2;
let running = 0;
const waiting: (() => void)[] = [];

/** The built CLI, asynchronously, at most PARALLEL at a time. */
async function cli(args: string[]): Promise<{ code: number | null; stderr: string }> {
  if (running >= PARALLEL) await new Promise<void>((go) => waiting.push(go));
  running++;
  try {
    return await new Promise((resolve, reject) => {
      const child = spawn(process.execPath, [CLI, ...args], { cwd: dir, stdio: ['ignore', 'ignore', 'pipe'] });
      let stderr = '';
      child.stderr.on('data', (b: Buffer) => (stderr += b.toString()));
      child.on('error', reject);
      child.on('close', (code) => resolve({ code, stderr }));
    });
  } finally {
    running--;
    waiting.shift()?.();
  }
}

/** `phasebook recalc <file>` in the corpus folder, into a fresh out folder unless one is given. */
async function recalc(file: string, options: { method?: string; args?: string[]; out?: string } = {}): Promise<Run> {
  const out = options.out ?? `out-${++runs}`;
  const inputBefore = sha256(join(dir, file));
  const r = await cli(['recalc', file, '--method', options.method ?? GENERIC, '--out', out, '--timestamp', TIMESTAMP, ...(options.args ?? [])]);
  const outPath = join(dir, out);
  return {
    code: r.code,
    stderr: r.stderr,
    out,
    files: existsSync(outPath) ? readdirSync(outPath).sort() : [],
    inputBefore,
    inputAfter: sha256(join(dir, file)),
  };
}

/** No stack frame lines ("    at f (file:1:2)") without --debug. */
function expectNoStack(stderr: string): void {
  expect(stderr).not.toMatch(/^\s+at /m);
  expect(stderr).not.toMatch(/unexpected error/);
}

/**
 * STYLE.md habit 7: place first (file, then `row N` or `line N`, then `column "x"`
 * or `key "x"`), then the words in sentence case with no final period.
 */
function expectGrammar(message: string): void {
  const m = /^[^,:\n]+(?:, (?:row|line) [1-9]\d*)?(?:, (?:column|key) "[^"\n]*")?: (?<text>.+)$/s.exec(message);
  expect(m, `message grammar: ${message}`).not.toBeNull();
  const text = m!.groups!.text!;
  expect(text[0], `sentence case, as in 'row 14, column "x": expected ...': ${message}`).toMatch(/[a-z"]/);
  expect(text, 'no final period').not.toMatch(/\.$/);
}

/** A stop: exit 2, exactly this message, the input untouched, nothing in the out folder. */
function expectStop(r: Run, message: string | RegExp): void {
  expectNoStack(r.stderr);
  expect(r.code, r.stderr).toBe(2);
  const m = /^phasebook: (?<message>.*)\nNothing was written\.\n$/s.exec(r.stderr);
  expect(m, r.stderr).not.toBeNull();
  const said = m!.groups!.message!;
  if (typeof message === 'string') expect(said).toBe(message);
  else expect(said).toMatch(message);
  expectGrammar(said);
  expect(r.inputAfter, 'the input file is unchanged').toBe(r.inputBefore);
  expect(r.files, 'no output and no temp file').toEqual([]);
}

function readResults(path: string): Record<string, string>[] {
  return Papa.parse<Record<string, string>>(readFileSync(path, 'utf8'), { header: true, skipEmptyLines: 'greedy' }).data;
}

async function readWorkbook(path: string): Promise<ExcelJS.Workbook> {
  const wb = new ExcelJS.Workbook();
  await wb.xlsx.readFile(path);
  return wb;
}

/** Text of every cell of a sheet, in reading order. */
function sheetTexts(ws: ExcelJS.Worksheet): string[] {
  const out: string[] = [];
  ws.eachRow((row) => row.eachCell((cell) => out.push(String(cell.text ?? ''))));
  return out;
}

/** 1-based line of the first line of `text` at or after `fromLine` that starts with `prefix`. */
function lineOf(text: string, prefix: string, fromLine = 1): number {
  const lines = text.split('\n');
  for (let i = fromLine - 1; i < lines.length; i++) if (lines[i]!.startsWith(prefix)) return i + 1;
  throw new Error(`no line starting with ${JSON.stringify(prefix)}`);
}

/** Line of the rpd_pct formula's expr in the generic method (the one the corpus replaces). */
const RPD_EXPR_LINE = lineOf(GENERIC_TEXT, '    expr:', lineOf(GENERIC_TEXT, '  - name: rpd_pct'));

// ------------------------------------------------------------------------ stops

describe.concurrent('whole-file damage stops with exit 2, a located message and nothing written', () => {
  it.each<{ kind: string; file: string; message: string | RegExp; method?: string }>([
    { kind: 'an empty file', file: 'empty.csv', message: 'empty.csv: is empty, expected a header row and data rows' },
    { kind: 'only blank lines', file: 'blank-lines.csv', message: 'blank-lines.csv: is empty, expected a header row and data rows' },
    {
      kind: 'a header with no rows',
      file: 'header-only.csv',
      message: 'header-only.csv: has a header row but no data rows, expected at least one row of data below the header',
    },
    { kind: 'a required column missing', file: 'missing-column.csv', message: 'missing-column.csv, row 1: missing the required column "solvent_volume"' },
    {
      kind: 'a workbook whose first sheet is not the worklist (the message names the sheets)',
      file: 'first-sheet-notes.xlsx',
      message: /^first-sheet-notes\.xlsx, row 1: missing the required column "[a-z_]+"; sheet "Notes" was read; the workbook's sheets are "Notes", "Worklist" \(choose one with --sheet\)$/,
    },
    {
      kind: 'a column given twice',
      file: 'doubled-column.csv',
      message:
        'doubled-column.csv, row 1, column "sample_volume": the header "sample_volume" appears twice (columns 7 and 17); expected each header once',
    },
    {
      kind: 'a field given twice under two headers',
      file: 'doubled-field.csv',
      message:
        'doubled-field.csv, row 1, column "Sample Volume [L]": the field sample_volume is given twice, in columns "sample_volume" and "Sample Volume [L]"; expected one column per field',
    },
    {
      kind: 'text named .xlsx',
      file: 'text-named.xlsx',
      message: 'text-named.xlsx: is not a readable XLSX workbook: it is named ".xlsx" but is not a zip archive (if it is CSV text, name it .csv)',
    },
    {
      kind: 'binary named .csv',
      file: 'binary-named.csv',
      // A PNG signature holds CR LF and LF: its first NUL (byte 9) is on text line 3.
      message: 'binary-named.csv, line 3: does not look like a CSV text file: it holds binary data (a NUL byte at byte 9)',
    },
    {
      kind: 'a truncated XLSX',
      file: 'truncated.xlsx',
      message: /^truncated\.xlsx: is not a readable XLSX workbook: the zip archive is damaged or cut short \(.+\)$/,
    },
    {
      kind: 'a corrupt XLSX (damaged packed data)',
      file: 'corrupt.xlsx',
      message: /^corrupt\.xlsx: is not a readable XLSX workbook: the part "xl\/worksheets\/sheet1\.xml" cannot be unpacked \(.+\); expected a workbook as a spreadsheet program saves it$/,
    },
    {
      kind: 'a corrupt XLSX (a sound zip, the sheet XML cut off)',
      file: 'corrupt-xml.xlsx',
      message:
        /^corrupt-xml\.xlsx: is not a readable XLSX workbook: the part "xl\/worksheets\/sheet1\.xml" is not well-formed XML \(.+\); expected a workbook as a spreadsheet program saves it$/,
    },
    {
      kind: 'an unclosed quote (the message says the line)',
      file: 'unclosed-quote.csv',
      // Row 2's note spans text lines 2–4, so row 4 starts on text line 6.
      message: 'unclosed-quote.csv, line 6: a quoted cell that starts on line 6 is never closed; expected a closing " before the end of the file',
    },
    {
      kind: 'a unit that is not a unit',
      file: 'unknown-unit.csv',
      message: 'unknown-unit.csv, row 1, column "sample_volume [furlong]": cannot read "furlong" as a unit; expected a volume unit such as mL, uL or L',
    },
    {
      kind: 'a unit that cannot be converted',
      file: 'unconvertible-unit.csv',
      message:
        'unconvertible-unit.csv, row 1, column "sample_volume [ng/mL]": cannot convert "ng/mL" (a mass concentration) to "mL" (a volume); expected a volume unit such as mL, uL or L',
    },
  ])('$kind', async ({ file, message, method }) => {
    expectStop(await recalc(file, { method }), message);
  });

  it('a method that fails its schema', async () => {
    const line = lineOf(readFileSync(join(dir, 'method-schema.yaml'), 'utf8'), '  - name: rpd_pct');
    expectStop(await recalc('accepted-clean.csv', { method: 'method-schema.yaml' }), `method-schema.yaml, line ${line}, key "formulas[4]": missing required key "expr"`);
  });

  it('a method with a cycle', async () => {
    expectStop(
      await recalc('accepted-clean.csv', { method: 'method-cycle.yaml' }),
      /^method-cycle\.yaml, line \d+, key "formulas": the formula columns depend on each other in a cycle: (?:distribution_ratio → extraction_efficiency_pct → distribution_ratio|extraction_efficiency_pct → distribution_ratio → extraction_efficiency_pct)$/,
    );
  });

  it('a method using a function it may not', async () => {
    expectStop(
      await recalc('accepted-clean.csv', { method: 'method-forbidden.yaml' }),
      `method-forbidden.yaml, line ${RPD_EXPR_LINE}, key "formulas[4].expr": formula "rpd_pct": the function "evaluate" is not allowed`,
    );
  });
});

// ------------------------------------------------------------------- row errors

describe.concurrent('row damage: exit 1, the row kept in its place with INPUT_ERROR and the reason', () => {
  it.each(ROW_DAMAGE)('$kind', async ({ file, column, reason }) => {
    const r = await recalc(file, { args: ['--outputs', 'csv,xlsx'] });
    expectNoStack(r.stderr);
    expect(r.code, r.stderr).toBe(1);
    expect(r.inputAfter).toBe(r.inputBefore);
    const stem = file.replace(/\.csv$/, '');
    expect(r.files).toEqual([`${stem}.results.csv`, `${stem}.xlsx`]);

    const rows = readResults(join(dir, r.out, `${stem}.results.csv`));
    expect(rows.map((x) => x.sample_id)).toEqual(['GOOD-1', 'BAD', 'GOOD-2']);
    expect(rows.map((x) => x.flags)).toEqual(['', 'INPUT_ERROR', '']);
    // The good rows compute; the damaged one's computed cells stay empty.
    const conc = rows.map((x) => x['pre_extraction_conc [ng/mL]']);
    expect(Number(conc[0])).toBeGreaterThan(0);
    expect(conc[1]).toBe('');
    expect(Number(conc[2])).toBeGreaterThan(0);

    // The reason, with the 1-based spreadsheet row (header = row 1), in the workbook's Flags sheet.
    const message = column === undefined ? `row 3: ${reason}` : `row 3, column "${column}": ${reason}`;
    expectGrammar(`${file}, ${message}`);
    const wb = await readWorkbook(join(dir, r.out, `${stem}.xlsx`));
    expect(sheetTexts(wb.getWorksheet('Flags')!)).toContain(message);
  });

  it('an XLSX number cell holding "12,5" (not a number as the format stores one): INPUT_ERROR naming the cell, the row kept', async () => {
    const r = await recalc('row-number-cell-text.xlsx', { args: ['--outputs', 'csv'] });
    expectNoStack(r.stderr);
    expect(r.code, r.stderr).toBe(1);
    const rows = readResults(join(dir, r.out, 'row-number-cell-text.results.csv'));
    expect(rows.map((x) => x.sample_id)).toEqual(['GOOD-1', 'BAD', 'GOOD-2']);
    expect(rows.map((x) => x.flags)).toEqual(['', 'INPUT_ERROR', '']);
    expect(rows[1]!.extract_conc).toBe('12,5'); // the cell as it was written
    expect(rows[1]!['pre_extraction_conc [ng/mL]']).toBe('');
    expect(Number(rows[0]!['pre_extraction_conc [ng/mL]'])).toBeGreaterThan(0);
  });

  it('spaces around values and a leading plus sign are not errors: same numbers as the clean file, cells kept as written', async () => {
    const [clean, spaced] = await Promise.all([
      recalc('accepted-clean.csv', { args: ['--outputs', 'csv'] }),
      recalc('accepted-spaced.csv', { args: ['--outputs', 'csv'] }),
    ]);
    for (const r of [clean, spaced]) {
      expectNoStack(r.stderr);
      expect(r.code, r.stderr).toBe(0);
    }
    const a = readResults(join(dir, clean.out, 'accepted-clean.results.csv'));
    const b = readResults(join(dir, spaced.out, 'accepted-spaced.results.csv'));
    expect(b.map((x) => x.flags)).toEqual(['', '']);
    for (const col of ['distribution_ratio', 'extraction_efficiency_pct', 'pre_extraction_conc [ng/mL]']) {
      expect(b.map((x) => x[col]), col).toEqual(a.map((x) => x[col]));
      expect(a.every((x) => x[col] !== '')).toBe(true);
    }
    // The input columns stay verbatim.
    const spacedRows = Papa.parse<string[]>(ACCEPTED.spaced, { skipEmptyLines: true }).data;
    expect(b.map((x) => x.extract_conc)).toEqual(spacedRows.slice(1).map((row) => row[5]));
    expect(b.map((x) => x.sample_volume)).toEqual(['+100', ' +250 ']);
  });

  it('mixed line ends (CRLF, LF, CR in one file) lose no row and glue no two rows together', async () => {
    const r = await recalc('mixed-line-ends.csv', { args: ['--outputs', 'csv'] });
    expectNoStack(r.stderr);
    expect(r.code, r.stderr).toBe(0);
    const rows = readResults(join(dir, r.out, 'mixed-line-ends.results.csv'));
    expect(rows.map((x) => x.sample_id)).toEqual(['S-1', 'S-2', 'S-3', 'S-4']);
    expect(rows.map((x) => x.flags)).toEqual(['', '', '', '']);
  });

  it('a very long text cell is fine (a 1,000,000-character remark, a 200,000-character id)', async () => {
    const r = await recalc('long-cell.csv', { args: ['--outputs', 'csv'] });
    expectNoStack(r.stderr);
    expect(r.code, r.stderr).toBe(0);
    const rows = readResults(join(dir, r.out, 'long-cell.results.csv'));
    expect(rows).toHaveLength(2);
    expect(rows[0]!.remark).toBe('r'.repeat(1_000_000));
    expect(rows[1]!.sample_id).toBe('S-'.padEnd(200_000, 'x'));
    expect(rows.map((x) => x.flags)).toEqual(['', '']);
  });
});

// ----------------------------------------------------------------- bounded work

describe.concurrent('bounded work: limits refuse early, with a message', () => {
  it('a worklist over --max-bytes is refused before it is read', async () => {
    expectStop(await recalc('over-max-bytes.csv', { args: ['--max-bytes', '1MB'] }), 'over-max-bytes.csv: is 1.9 MiB, larger than the 1 MiB accepted');
  });

  it('an XLSX whose parts unpack past --max-unpacked is refused from the zip directory', async () => {
    expectStop(
      await recalc('bomb-many-parts.xlsx', { args: ['--max-unpacked', '8MB'] }),
      'bomb-many-parts.xlsx: was refused as a possible zip bomb: its entries would unpack to more than 8 MiB (--max-unpacked); raise --max-unpacked if the workbook is genuine',
    );
  });

  it('a zip bomb (200 MiB of zeros in 200 KiB) is refused with the default limits', async () => {
    expectStop(
      await recalc('bomb-one-part.xlsx'),
      /^bomb-one-part\.xlsx: was refused as a possible zip bomb: entry "xl\/worksheets\/sheet1\.xml" would unpack [\d.]+ KiB into 200 MiB \(ratio \d+:1, at most 1000:1 accepted\)$/,
    );
  });

  it('a zip whose directory understates a part (1 KiB stated, 50 MiB inside) is refused while unpacking', async () => {
    expectStop(
      await recalc('bomb-lying.xlsx'),
      'bomb-lying.xlsx: was refused as a possible zip bomb: entry "xl/worksheets/sheet1.xml" unpacks to more than the 1 KiB it states',
    );
  });
});

// ---------------------------------------------------------------- nothing lost

describe('nothing lost: existing outputs, interrupted runs', () => {
  it('an existing output is not overwritten without --force (exit 2, files unchanged)', async () => {
    const first = await recalc('accepted-clean.csv');
    expect(first.code, first.stderr).toBe(0);
    const outDir = join(dir, first.out);
    const before = first.files.map((f) => [f, sha256(join(outDir, f))]);
    expect(first.files).toContain('accepted-clean.results.csv');

    const second = await recalc('accepted-clean.csv', { out: first.out, args: ['--timestamp', '2027-01-01T00:00:00Z'] });
    expectNoStack(second.stderr);
    expect(second.code).toBe(2);
    expect(second.stderr).toMatch(
      new RegExp(`^phasebook: ${first.out}/accepted-clean\\.results\\.csv: ${first.files.length} outputs already exist \\(.+\\); use --force to replace them\\nNothing was written\\.\\n$`),
    );
    expect(second.files).toEqual(first.files); // no temp file beside them
    expect(second.files.map((f) => [f, sha256(join(outDir, f))])).toEqual(before);
  });

  /** Spawn the built CLI, wait until it is writing (a temp file shows), then press Ctrl-C. */
  async function interruptWhileWriting(outDir: string, args: string[] = []): Promise<{ code: number | null; signal: string | null; stderr: string; sawTemp: boolean }> {
    const child = spawn(process.execPath, [CLI, 'recalc', 'interrupt.csv', '--method', GENERIC, '--out', outDir, '--timestamp', TIMESTAMP, ...args], {
      cwd: dir,
      stdio: ['ignore', 'ignore', 'pipe'],
    });
    let stderr = '';
    child.stderr.on('data', (b: Buffer) => (stderr += b.toString()));
    const exited = new Promise<{ code: number | null; signal: string | null }>((resolve) => child.on('exit', (code, signal) => resolve({ code, signal })));
    let ended = false;
    void exited.then(() => (ended = true));
    let sawTemp = false;
    while (!ended && !sawTemp) {
      await new Promise((r) => setTimeout(r, 20));
      sawTemp = existsSync(join(dir, outDir)) && readdirSync(join(dir, outDir)).some((f) => f.startsWith('.phasebook-tmp-'));
    }
    if (sawTemp) child.kill('SIGINT');
    const { code, signal } = await exited;
    return { code, signal, stderr, sawTemp };
  }

  it('Ctrl-C while writing: exit 130, no partial output, no temp file, the input unchanged', async () => {
    const before = sha256(join(dir, 'interrupt.csv'));
    const r = await interruptWhileWriting('out-interrupted');
    expect(r.sawTemp, 'the run ended before it could be interrupted: make interrupt.csv larger').toBe(true);
    expect(r.signal).toBeNull();
    expect(r.code).toBe(130);
    expectNoStack(r.stderr);
    expect(readdirSync(join(dir, 'out-interrupted'))).toEqual([]);
    expect(sha256(join(dir, 'interrupt.csv'))).toBe(before);
  }, 180_000);

  it('Ctrl-C while replacing outputs with --force: the previous outputs stay as they were', async () => {
    const outDir = join(dir, 'out-interrupted-force');
    mkdirSync(outDir, { recursive: true });
    const old = { 'interrupt.results.csv': 'previous results\n', 'interrupt.xlsx': 'previous workbook' };
    for (const [name, text] of Object.entries(old)) writeFileSync(join(outDir, name), text);
    const r = await interruptWhileWriting('out-interrupted-force', ['--force', '--outputs', 'csv,xlsx']);
    expect(r.sawTemp, 'the run ended before it could be interrupted: make interrupt.csv larger').toBe(true);
    expect(r.code).toBe(130);
    expectNoStack(r.stderr);
    expect(readdirSync(outDir).sort()).toEqual(Object.keys(old).sort());
    for (const [name, text] of Object.entries(old)) expect(readFileSync(join(outDir, name), 'utf8')).toBe(text);
  }, 180_000);
});

// ------------------------------------------------------------- no stack trace

describe('no stack trace reaches the user without --debug', () => {
  /** Preloaded into the CLI: throws from a timer (outside any promise chain) once the CLI has started its run. */
  const THROW_LATER =
    'data:text/javascript,const t=setInterval(()=>{if(process.listenerCount("uncaughtException")>0){clearInterval(t);setTimeout(()=>{throw new Error("boom")},0)}},5)';

  function crashRun(extra: string[]) {
    return new Promise<{ code: number | null; stderr: string }>((resolve) => {
      const child = spawn(process.execPath, ['--import', THROW_LATER, CLI, 'recalc', 'interrupt.csv', '--method', GENERIC, '--out', `out-${++runs}`, ...extra], {
        cwd: dir,
        stdio: ['ignore', 'ignore', 'pipe'],
      });
      let stderr = '';
      child.stderr.on('data', (b: Buffer) => (stderr += b.toString()));
      child.on('close', (code) => resolve({ code, stderr }));
    });
  }

  it('an unexpected error anywhere: one line, exit 2, no stack; --debug shows the stack', async () => {
    const plain = await crashRun([]);
    expect(plain.code).toBe(2);
    expect(plain.stderr).toBe('phasebook: unexpected error: boom\nNothing was written. (run with --debug for details)\n');
    const debug = await crashRun(['--debug']);
    expect(debug.code).toBe(2);
    expect(debug.stderr).toMatch(/^phasebook: unexpected error: boom\nNothing was written\.\nError: boom\n\s+at /);
  }, 120_000);

  it('a stop with --debug shows where it came from; without, it does not', async () => {
    const said = `row-short.csv: is ${statSync(join(dir, 'row-short.csv')).size} bytes, larger than the 10 bytes accepted`;
    const plain = await recalc('row-short.csv', { args: ['--outputs', 'csv', '--max-bytes', '10'] });
    expectStop(plain, said);
    const debug = await recalc('row-short.csv', { args: ['--outputs', 'csv', '--max-bytes', '10', '--debug'] });
    expect(debug.code).toBe(2);
    expect(debug.stderr.startsWith(`phasebook: ${said}\nNothing was written.\nStopError: `)).toBe(true);
    expect(debug.stderr).toMatch(/^\s+at /m);
  });
});

// ------------------------------------------------------------ text never code

/** OWASP CSV Injection: a text cell must not start with = + - @ tab CR (or LF, NUL) unless it is a plain number. */
const TRIGGER = /^[=+\-@\t\r\n\0]/;
const PLAIN_NUMBER = /^[+-](?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?$/;

describe.concurrent('text never becomes code', () => {
  it('results CSV: text starting with = + - @ tab CR is neutralised with a leading quote; numbers such as -2.5 and "-0.02" stay as written', async () => {
    const r = await recalc('injection.csv', { args: ['--outputs', 'csv'] });
    expectNoStack(r.stderr);
    expect(r.code, r.stderr).toBe(0);
    const path = join(dir, r.out, 'injection.results.csv');
    const rows = readResults(path);
    expect(rows.map((x) => x.sample_id)).toEqual(["'=SUM(A1)", "'@cmd", "'+1+1", "'-2+3", 'S-5']);
    // A CR inside a quoted cell is read as a line break (LF), which is neutralised just the same.
    expect(rows.map((x) => x.remark)).toEqual(['\'=HYPERLINK("http://example.invalid","x")', '-0.02', "'\tTAB", "'\nCR", '+5']);
    expect(rows[3]!.extract_conc).toBe('-2.5');
    expect(Number(rows[3]!['pre_extraction_conc [ng/mL]'])).toBeLessThan(0); // a computed negative is a number
    // Every field of the file: a trigger character first only in a plain number.
    const all = Papa.parse<string[]>(readFileSync(path, 'utf8'), { skipEmptyLines: 'greedy' }).data.flat();
    for (const field of all) if (TRIGGER.test(field)) expect(field, JSON.stringify(field)).toMatch(PLAIN_NUMBER);
  });

  it.each(['injection.csv', 'injection.xlsx'])('workbook from %s: the input text cells are string cells, never formulas', async (file) => {
    const r = await recalc(file, { args: ['--outputs', 'xlsx'] });
    expectNoStack(r.stderr);
    expect(r.code, r.stderr).toBe(0);
    const wb = await readWorkbook(join(dir, r.out, file.replace(/\.\w+$/, '.xlsx')));
    const hostile = file.endsWith('.csv')
      ? ['=SUM(A1)', '@cmd', '+1+1', '-2+3', '=HYPERLINK("http://example.invalid","x")', '\tTAB']
      : ['=1+2', '@SUM(A1)', '=cmd'];
    const results = wb.getWorksheet('Results')!;
    const found = new Map<string, ExcelJS.ValueType>();
    results.eachRow((row) =>
      row.eachCell((cell) => {
        if (typeof cell.value === 'string' && hostile.includes(cell.value)) found.set(cell.value, cell.type);
      }),
    );
    expect([...found.keys()].sort()).toEqual([...hostile].sort());
    for (const [text, type] of found) expect(type, text).toBe(ExcelJS.ValueType.String);
    // No formula anywhere in the workbook is the worklist's text (with or without its first character).
    for (const ws of wb.worksheets) {
      ws.eachRow((row) =>
        row.eachCell((cell) => {
          if (cell.type !== ExcelJS.ValueType.Formula) return;
          const where = `${ws.name}!${cell.address}: ${cell.formula}`;
          expect(cell.formula, where).not.toMatch(/SUM\(A1\)|cmd|HYPERLINK/);
          for (const h of hostile) expect([h, h.slice(1)], where).not.toContain(cell.formula);
        }),
      );
    }
  });

  /** Why each attempt is refused (the words after `formula "rpd_pct": `, or the schema's). */
  const REFUSALS: Record<string, RegExp> = {
    import: /^formula "rpd_pct": the function "import" is not allowed$/,
    createUnit: /^formula "rpd_pct": the function "createUnit" is not allowed$/,
    'defining a function': /^formula "rpd_pct": defining a function is not allowed in a formula$/,
    assignment: /^formula "rpd_pct": assignment \(=\) is not allowed in a formula$/,
    'a constructor through a function object': /^formula "rpd_pct": (?:only named functions may be called|property or index access \(\. or \[\]\) is not allowed in a formula)$/,
    'a constructor through an index': /^formula "rpd_pct": (?:only named functions may be called|property or index access \(\. or \[\]\) is not allowed in a formula)$/,
    'an array constructor': /^formula "rpd_pct": property or index access \(\. or \[\]\) is not allowed in a formula$/,
    'a string constructor': /^formula "rpd_pct": property or index access \(\. or \[\]\) is not allowed in a formula$/,
    'a bare constructor name': /^formula "rpd_pct": unknown name "constructor"$/,
    'a prototype name': /^formula "rpd_pct": unknown name "__proto__"$/,
    'evaluate a string': /^formula "rpd_pct": the function "evaluate" is not allowed$/,
    'parse a string': /^formula "rpd_pct": the function "parse" is not allowed$/,
    'compile a string': /^formula "rpd_pct": the function "compile" is not allowed$/,
    'a function held in a variable': /^formula "rpd_pct": a block of several statements \(; or newline\) is not allowed in a formula$/,
    'an escape sequence in a name': /^formula "rpd_pct": cannot parse the formula: /,
    'a YAML unicode escape': /^formula "rpd_pct": the function "evaluate" is not allowed$/,
    'a homoglyph of an allowed function': /^formula "rpd_pct": (?:cannot parse the formula: |the function "ѕqrt" is not allowed)/,
    'an object literal': /^formula "rpd_pct": (?:property or index access \(\. or \[\]\)|an object literal \(\{\}\)) is not allowed in a formula$/,
    'a matrix that takes memory': /^formula "rpd_pct": the function "zeros" is not allowed$/,
    'a range': /^formula "rpd_pct": the function "sum" is not allowed$/,
    'a chained function call': /^formula "rpd_pct": (?:only named functions may be called|property or index access \(\. or \[\]\) is not allowed in a formula|the function "chain" is not allowed)$/,
    // Longer than the schema's 2000 characters, or past the engine's depth and size limits.
    'nesting without end': /^(?:must NOT have more than 2000 characters, got ".+"|formula "rpd_pct": (?:cannot parse the formula: the expression is nested too deeply|the formula is nested more than 64 levels deep))$/s,
    'a very deep sum': /^formula "rpd_pct": the formula is nested more than 64 levels deep$/,
    'a very long expression': /^must NOT have more than 2000 characters, got ".+"$/s,
    'a huge exponent chain': /^formula "rpd_pct": the formula is nested more than 64 levels deep$/,
  };

  it('every escape attempt in the corpus has an expected refusal', () => {
    expect(ESCAPES.map((e) => e.kind).sort()).toEqual(Object.keys(REFUSALS).sort());
  });

  it.each(ESCAPES.map((e, i) => ({ ...e, file: `method-escape-${String(i + 1).padStart(2, '0')}.yaml` })))(
    'method formula: $kind is refused with a method error (exit 2)',
    async ({ kind, file }) => {
      const r = await recalc('accepted-clean.csv', { method: file });
      const prefix = `${file}, line ${RPD_EXPR_LINE}, key "formulas[4].expr": `;
      expectStop(r, new RegExp(`^${prefix.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}`));
      const said = /^phasebook: (.*)\nNothing was written\.\n$/s.exec(r.stderr)![1]!;
      expect(said.slice(prefix.length)).toMatch(REFUSALS[kind]!);
    },
  );
});
