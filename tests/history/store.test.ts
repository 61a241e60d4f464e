import Database from 'better-sqlite3';
import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { StopError } from '../../src/errors.js';
import { APPLICATION_MARKER, LATEST_VERSION, MIGRATIONS, migrate, userVersion } from '../../src/history/migrations.js';
import { loadSqlite, readHistory, recordRun } from '../../src/history/store.js';
import type { RecalcResult } from '../../src/pipeline.js';
import { lcsRun, recalcRows, runTime } from '../report/fixtures.js';

let dir: string;
let runA: RecalcResult;
let runB: RecalcResult;
let n = 0;
const fresh = (name = 'h') => join(dir, `${name}-${++n}.db`);
const sha = (path: string) => createHash('sha256').update(readFileSync(path)).digest('hex');

function query<T>(file: string, sql: string): T[] {
  const db = new Database(file, { readonly: true });
  try {
    return db.prepare(sql).all() as T[];
  } finally {
    db.close();
  }
}

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'phasebook-store-'));
  // Run A: blank, LCS at 98.5 %, sample; with an LCSD at 101.5 % (RPD on concentrations 3.0 %).
  runA = await recalcRows(dir, 'run-a.csv', [
    ...lcsRun(1, 98.5),
    { sampleId: 'B1-LCSD', type: 'lcsd', parent: 'B1-LCS', batch: 'B1', analyte: 'Atrazine', value: 101.5 },
  ]);
  runB = await recalcRows(dir, 'run-b.csv', lcsRun(2, 140)); // recovery above 70–130: a failed LCS
});

afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** The pre_extraction_conc the run computed for a sample id (as SQLite keeps it: null when empty). */
function resultOf(result: RecalcResult, sampleId: string): number | null {
  const r = result.table.texts.get('sample_id')!.indexOf(sampleId);
  const x = result.computed.get('pre_extraction_conc')![r]!;
  return Number.isFinite(x) ? x : null;
}

describe('recordRun', () => {
  it('records every control row with its run, in a new WAL-mode file at the latest schema version', async () => {
    const file = fresh();
    const summary = await recordRun(file, runA, { timestamp: runTime(1) });
    expect(summary).toEqual({ runId: 1, added: 3, alreadyRecorded: false, versionBefore: 0 });

    const db = new Database(file, { readonly: true });
    try {
      expect(userVersion(db)).toBe(LATEST_VERSION);
      expect(db.pragma('journal_mode', { simple: true })).toBe('wal');
      expect(db.prepare("SELECT value FROM meta WHERE key = 'application'").pluck().get()).toBe(APPLICATION_MARKER);
    } finally {
      db.close();
    }
    const runs = query<Record<string, unknown>>(file, 'SELECT * FROM runs');
    expect(runs).toEqual([
      {
        id: 1,
        run_time: '2026-01-01T10:00:00.000Z',
        worklist_name: 'run-a.csv',
        worklist_sha256: sha(join(dir, 'run-a.csv')),
        method_name: 'generic-lle',
        method_sha256: runA.method.sha256,
        concentration_unit: 'ng/mL',
      },
    ]);
    // The method's own text is kept once, for the figures it asks for (schema version 3).
    expect(query<Record<string, unknown>>(file, 'SELECT sha256, name, text FROM methods')).toEqual([
      { sha256: runA.method.sha256, name: 'generic-lle', text: runA.method.text },
    ]);
    const controls = query<Record<string, unknown>>(
      file,
      'SELECT row_number, sample_id, batch_id, analyte, sample_type, qc_level, recovery_pct, rpd_pct, status, recovery_low, recovery_high, flags FROM controls ORDER BY id',
    );
    // The sample row (qc_status empty) is not a control and is not recorded.
    expect(controls.map((c) => [c.row_number, c.sample_id, c.sample_type, c.status])).toEqual([
      [2, 'B1-BLK', 'blank', 'pass'],
      [3, 'B1-LCS', 'lcs', 'pass'],
      [5, 'B1-LCSD', 'lcsd', 'pass'],
    ]);
    expect(controls[0]).toMatchObject({ batch_id: 'B1', analyte: 'Atrazine', qc_level: '', recovery_pct: null, rpd_pct: null });
    // Recovery = extract_conc with the fixture's volumes (fixtures.ts); limits 70–130 % of the generic method (DESIGN.md §5).
    expect(controls[1]!.recovery_pct).toBeCloseTo(98.5, 9);
    expect(controls[1]).toMatchObject({ recovery_low: 70, recovery_high: 130 });
    // RPD = |a − b| / ((a + b)/2) × 100 = 3/100 × 100 = 3.0 % (REFERENCES.md §2 RPD formula).
    expect(controls[2]!.rpd_pct).toBeCloseTo(3, 9);
    // Each control's result (pre_extraction_conc) and whether it was detected (schema version 3).
    const results = query<{ result: number | null; nondetect: number }>(file, 'SELECT result, nondetect FROM controls ORDER BY id');
    expect(results.map((r) => r.nondetect)).toEqual([0, 0, 0]);
    expect(results.map((r) => r.result)).toEqual(['B1-BLK', 'B1-LCS', 'B1-LCSD'].map((id) => resultOf(runA, id)));
  });

  it('records a failed control with its status and flags', async () => {
    const file = fresh();
    await recordRun(file, runB, { timestamp: runTime(2) });
    const lcs = query<Record<string, unknown>>(file, "SELECT status, flags, recovery_pct FROM controls WHERE sample_type = 'lcs'");
    expect(lcs).toEqual([{ status: 'fail', flags: 'REC_HIGH', recovery_pct: expect.closeTo(140, 9) }]);
  });

  it('adds nothing when the same worklist and method are recorded again, whatever the run time', async () => {
    const file = fresh();
    await recordRun(file, runA, { timestamp: runTime(1) });
    const before = sha(file);
    const again = await recordRun(file, runA, { timestamp: runTime(5) });
    expect(again).toEqual({ runId: 1, added: 0, alreadyRecorded: true, versionBefore: LATEST_VERSION });
    expect(query(file, 'SELECT id FROM runs')).toHaveLength(1);
    expect(query(file, 'SELECT id FROM controls')).toHaveLength(3);
    expect(sha(file)).toBe(before);
  });

  it('records the same worklist again under a changed method (the pair identifies a run)', async () => {
    const file = fresh();
    await recordRun(file, runA, { timestamp: runTime(1) });
    const changed = { ...runA, method: { ...runA.method, sha256: 'f'.repeat(64) } };
    const second = await recordRun(file, changed, { timestamp: runTime(1) });
    expect(second).toMatchObject({ runId: 2, added: 3, alreadyRecorded: false });
  });

  it('writes a run whole or not at all (one transaction per run)', async () => {
    const file = fresh();
    await recordRun(file, runA, { timestamp: runTime(1) });
    // A broken third control row (no row number) makes its insert fail after the run and two rows went in.
    const rowNumbers = Array.from(runB.raw.rowNumbers) as (number | undefined)[];
    rowNumbers[1] = undefined;
    const broken = { ...runB, raw: { ...runB.raw, rowNumbers } } as unknown as RecalcResult;
    await expect(recordRun(file, broken, { timestamp: runTime(2) })).rejects.toThrow(StopError);
    expect(query(file, 'SELECT id FROM runs')).toHaveLength(1);
    expect(query(file, 'SELECT id FROM controls')).toHaveLength(3);
  });

  it('turns an empty file into a history', async () => {
    const file = fresh();
    writeFileSync(file, '');
    await expect(recordRun(file, runA, { timestamp: runTime(1) })).resolves.toMatchObject({ added: 3, versionBefore: 0 });
  });
});

describe('refusing files that are not a phasebook history', () => {
  function foreignSqlite(setup: string, version = 0): string {
    const file = fresh('foreign');
    const db = new Database(file);
    db.exec(setup);
    if (version) db.pragma(`user_version = ${version}`);
    db.close();
    return file;
  }

  it.each<[string, () => string, string]>([
    [
      'a text file',
      () => {
        const file = fresh('text');
        writeFileSync(file, 'sample_id,analyte\nS1,Atrazine\n'.repeat(50));
        return file;
      },
      'expected a phasebook QC history, got a file that is not an SQLite database',
    ],
    [
      'another application’s SQLite database',
      () => foreignSqlite('CREATE TABLE patients (id INTEGER PRIMARY KEY, name TEXT); INSERT INTO patients (name) VALUES (\'x\');'),
      'expected a phasebook QC history, got an SQLite database without the phasebook marker (tables "patients")',
    ],
    [
      'a database with its own "meta" table',
      () => foreignSqlite('CREATE TABLE meta (k TEXT, v TEXT);'),
      'expected a phasebook QC history, got an SQLite database without the phasebook marker (tables "meta")',
    ],
    [
      'a database with a different marker',
      () => foreignSqlite("CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT); INSERT INTO meta VALUES ('application', 'something else');", 1),
      'expected a phasebook QC history, got an SQLite database without the phasebook marker (tables "meta")',
    ],
    [
      'an empty database with a user_version set by someone else',
      () => foreignSqlite('', 7),
      'expected a phasebook QC history, got an SQLite database without the phasebook marker (no tables)',
    ],
    [
      'a history from a newer phasebook',
      () => foreignSqlite(`CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT); INSERT INTO meta VALUES ('application', '${APPLICATION_MARKER}');`, 99),
      `the QC history has schema version 99, written by a newer phasebook; this phasebook reads versions 1 to ${LATEST_VERSION}`,
    ],
  ])('%s: a clear StopError and the file is left unchanged', async (_name, make, message) => {
    const file = make();
    const before = sha(file);
    const size = statSync(file).size;
    for (const attempt of [() => recordRun(file, runA, { timestamp: runTime(1) }), () => readHistory(file)]) {
      const err = await attempt().then(
        () => undefined,
        (e: unknown) => e,
      );
      expect(err).toBeInstanceOf(StopError);
      expect((err as StopError).message).toBe(message);
      expect((err as StopError).location.file).toBe(file);
      expect((err as StopError).describe()).toBe(`${file}: ${message}`);
    }
    expect(statSync(file).size).toBe(size);
    expect(sha(file)).toBe(before);
  });

  it('says a missing history must be recorded first (trends reads, never creates)', async () => {
    const file = join(dir, 'nowhere.db');
    await expect(readHistory(file)).rejects.toThrow('does not exist; record runs into it first with "phasebook recalc --history"');
  });

  it('calls a history with a damaged page damaged, not "without the phasebook marker"', async () => {
    const file = fresh('damaged');
    await recordRun(file, runA, { timestamp: runTime(1) });
    const db = new Database(file, { readonly: true });
    const page = db.prepare("SELECT rootpage FROM sqlite_schema WHERE name = 'meta'").pluck().get() as number;
    const pageSize = db.pragma('page_size', { simple: true }) as number;
    db.close();
    // Overwrite the start of the meta table's page (its b-tree header) with garbage, as a bad disk block would.
    const bytes = readFileSync(file);
    bytes.fill(0xde, (page - 1) * pageSize, (page - 1) * pageSize + 256);
    writeFileSync(file, bytes);
    for (const read of [() => readHistory(file), () => recordRun(file, runB, { timestamp: runTime(2) })]) {
      await expect(read()).rejects.toThrow('the QC history is damaged: database disk image is malformed');
    }
  });

  it.each<[string, () => string, (file: string) => string]>([
    ['its folder is missing', () => join(dir, 'no-such-folder', 'h.db'), (file) => `the QC history cannot be created: the folder ${join(file, '..')} does not exist`],
    ['it is a folder', () => dir, () => 'the QC history cannot be opened: check that it is a file and that you may read and write it'],
  ])('says when the history cannot be opened: %s', async (_name, path, message) => {
    const file = path();
    await expect(recordRun(file, runA, { timestamp: runTime(1) })).rejects.toThrow(message(file));
  });
});

describe('migrations', () => {
  it('are numbered 1, 2, … with the last one the latest version', () => {
    expect(MIGRATIONS.map((m) => m.version)).toEqual(MIGRATIONS.map((_, i) => i + 1));
    expect(LATEST_VERSION).toBe(3);
  });

  /** A history as phasebook wrote it at schema version 1, with one run. */
  function v1History(): string {
    const file = fresh('v1');
    const db = new Database(file);
    db.pragma('journal_mode = WAL');
    migrate(db, { to: 1 });
    db.prepare("INSERT INTO runs VALUES (1, '2025-12-01T09:00:00.000Z', 'old.csv', ?, 'generic-lle', ?)").run('a'.repeat(64), 'b'.repeat(64));
    db.prepare("INSERT INTO controls VALUES (1, 1, 3, 'OLD-LCS', 'B0', 'Atrazine', 'lcs', '', 97.25, NULL, 'pass')").run();
    db.close();
    return file;
  }

  it('reads a version 1 file without changing it', async () => {
    const file = v1History();
    const before = sha(file);
    const rows = await readHistory(file);
    expect(rows).toEqual([
      expect.objectContaining({ runId: 1, batchId: 'B0', sampleId: 'OLD-LCS', recoveryPct: 97.25, recoveryLow: NaN, recoveryHigh: NaN, flags: '' }),
    ]);
    expect(sha(file)).toBe(before);
  });

  it('brings a version 1 file to the latest version when a run is recorded, keeping the old rows', async () => {
    const file = v1History();
    const summary = await recordRun(file, runA, { timestamp: runTime(1) });
    expect(summary).toMatchObject({ versionBefore: 1, runId: 2, added: 3 });
    const db = new Database(file, { readonly: true });
    try {
      expect(userVersion(db)).toBe(3);
      const columns = (db.prepare('PRAGMA table_info(controls)').all() as Array<{ name: string }>).map((c) => c.name);
      expect(columns).toEqual(expect.arrayContaining(['recovery_low', 'recovery_high', 'flags', 'result', 'nondetect']));
      expect(db.prepare("SELECT name FROM sqlite_schema WHERE type = 'index' AND name = 'controls_series'").pluck().get()).toBe('controls_series');
      const old = db.prepare("SELECT recovery_pct, recovery_low, flags FROM controls WHERE sample_id = 'OLD-LCS'").get();
      expect(old).toEqual({ recovery_pct: 97.25, recovery_low: null, flags: '' });
      // Its result was never kept: unknown (NULL), not "detected" or "not detected".
      expect(db.prepare("SELECT result, nondetect FROM controls WHERE sample_id = 'OLD-LCS'").get()).toEqual({ result: null, nondetect: null });
    } finally {
      db.close();
    }
    const rows = await readHistory(file);
    expect(rows.map((r) => r.sampleId)).toEqual(['OLD-LCS', 'B1-BLK', 'B1-LCS', 'B1-LCSD']);
    expect(rows.map((r) => [r.nondetect, r.concentrationUnit])).toEqual([
      [undefined, ''],
      [false, 'ng/mL'],
      [false, 'ng/mL'],
      [false, 'ng/mL'],
    ]);
  });

  it('do nothing when run again', () => {
    const file = fresh('again');
    const db = new Database(file);
    try {
      expect(migrate(db)).toBe(0);
      expect(migrate(db)).toBe(LATEST_VERSION);
      expect(userVersion(db)).toBe(LATEST_VERSION);
      expect(db.prepare('SELECT count(*) FROM meta').pluck().get()).toBe(1);
    } finally {
      db.close();
    }
  });
});

describe('readHistory', () => {
  it('returns the rows in run order (run time, then recording order, then row), not recording order', async () => {
    const file = fresh();
    await recordRun(file, runB, { timestamp: runTime(2) });
    await recordRun(file, runA, { timestamp: runTime(1) });
    const rows = await readHistory(file);
    expect(rows.map((r) => [r.runTime.slice(0, 10), r.sampleId])).toEqual([
      ['2026-01-01', 'B1-BLK'],
      ['2026-01-01', 'B1-LCS'],
      ['2026-01-01', 'B1-LCSD'],
      ['2026-01-02', 'B2-BLK'],
      ['2026-01-02', 'B2-LCS'],
    ]);
    expect(rows[1]).toMatchObject({ runId: 2, worklistName: 'run-a.csv', methodName: 'generic-lle', status: 'pass', recoveryLow: 70, recoveryHigh: 130 });
    expect(rows[0]!.recoveryPct).toBeNaN();
  });
});

describe('loadSqlite', () => {
  it('names the missing optional package and how to install it', async () => {
    const missing = Object.assign(new Error("Cannot find package 'better-sqlite3'"), { code: 'ERR_MODULE_NOT_FOUND' });
    const err = await loadSqlite({ importer: () => Promise.reject(missing) }).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(StopError);
    expect((err as StopError).kind).toBe('usage');
    expect((err as StopError).message).toBe(
      'the QC history needs the optional package better-sqlite3 (version 12), which is not installed or could not load its native part; install it with "npm install better-sqlite3@12"',
    );
  });

  it('passes other errors through unchanged', async () => {
    const bug = new TypeError('something else');
    await expect(loadSqlite({ importer: () => Promise.reject(bug) })).rejects.toBe(bug);
  });

  it('loads the installed package', async () => {
    expect(await loadSqlite()).toBe(Database);
  });
});
