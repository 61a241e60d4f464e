/**
 * The QC history: an SQLite file (better-sqlite3, an optional dependency loaded
 * only when a history is asked for) that keeps every control row of every run.
 *
 * - WAL journal, synchronous FULL (a QC record should survive a power cut).
 * - One IMMEDIATE transaction per run: a run is in the file whole, or not at all.
 * - Idempotent: a run is identified by its worklist SHA-256 and method SHA-256;
 *   recording the same pair again adds nothing.
 * - Versioned: `PRAGMA user_version` plus an application marker in `meta`
 *   (migrations.ts). A file without the marker is refused before anything is
 *   written to it; a file from a newer phasebook is refused too.
 * - An empty file (0 bytes, or an SQLite file with no tables) becomes a new history.
 */
import { existsSync, rmSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname } from 'node:path';
import type { Database, Options } from 'better-sqlite3';
import { StopError } from '../errors.js';
import type { RecalcResult } from '../pipeline.js';
import { APPLICATION_MARKER, LATEST_VERSION, migrate, userVersion } from './migrations.js';
import { controlRecords, runRecord, type HistoryRow } from './records.js';

type SqliteConstructor = new (file: string, options?: Options) => Database;

export interface RecordSummary {
  /** Id of the run in the file (the existing one when it was already recorded). */
  runId: number;
  /** Control rows added: 0 when the run was already recorded. */
  added: number;
  alreadyRecorded: boolean;
  /** Schema version of the file before this call (0 for a new file). */
  versionBefore: number;
}

export interface LoadOptions {
  /** How to load the package (tests replace it); default: `require('better-sqlite3')`. */
  importer?: () => Promise<{ default: unknown }>;
}

const require = createRequire(import.meta.url);

const MISSING_PACKAGE =
  'the QC history needs the optional package better-sqlite3 (version 12), which is not installed or could not load its native part; ' +
  'install it with "npm install better-sqlite3@12"';

/** The better-sqlite3 constructor, or a StopError saying how to install it. */
export async function loadSqlite(options: LoadOptions = {}): Promise<SqliteConstructor> {
  // required, not imported: the package is CommonJS, and the bundled command line runs as a
  // script, in which a dynamic import() would need Node's experimental vm loader (scripts/bundle-loader.mjs)
  const importer = options.importer ?? (async () => ({ default: require('better-sqlite3') as unknown }));
  try {
    const mod = await importer();
    return mod.default as SqliteConstructor;
  } catch (err) {
    if (isMissingPackage(err)) throw new StopError('usage', MISSING_PACKAGE);
    throw err;
  }
}

/**
 * A history opened for one run: its write lock taken (an IMMEDIATE transaction) before
 * anything of the run is written, so that a history another process holds, a foreign
 * file or a missing SQLite package stops the run first; the run's controls are staged
 * in the transaction and committed in the same step as the outputs, or rolled back.
 */
export interface HistorySession {
  readonly file: string;
  /** Every control row as it stands, in run order (as readHistory gives them), read under the lock. */
  readonly rows: HistoryRow[];
  /** Add the run's control rows to the open transaction (nothing is in the file until commit). */
  stage(result: RecalcResult, run: { timestamp: string }): RecordSummary;
  /** Make the staged run durable; a located StopError when SQLite cannot. */
  commit(): void;
  /** Roll back and close; a file this session created is removed again. */
  abandon(): void;
}

/**
 * Open (or create) a history for a run and take its write lock. Waits up to five
 * seconds for another process that holds it, then stops with a located message.
 */
export async function openHistory(dbPath: string): Promise<HistorySession> {
  const Sqlite = await loadSqlite();
  if (!existsSync(dirname(dbPath) || '.')) {
    throw new StopError('output', `the QC history cannot be created: the folder ${dirname(dbPath)} does not exist`, { file: dbPath });
  }
  const created = !existsSync(dbPath);
  let db: Database | undefined;
  let open = false;
  const closeAndForget = () => {
    if (db?.inTransaction) db.exec('ROLLBACK');
    db?.close();
    db = undefined;
    if (created) for (const part of ['', '-wal', '-shm', '-journal']) rmSync(dbPath + part, { force: true });
  };
  try {
    db = new Sqlite(dbPath, { timeout: 5000 });
    // Verify before the first write: even switching a foreign file to WAL would change it.
    const versionBefore = verifyHistory(db, dbPath);
    db.pragma('journal_mode = WAL');
    db.pragma('synchronous = FULL');
    db.pragma('foreign_keys = ON');
    db.exec('BEGIN IMMEDIATE');
    open = true;
    migrate(db);
    const rows = selectRows(db, LATEST_VERSION);
    const session: HistorySession = {
      file: dbPath,
      rows,
      stage: (result, run) => {
        try {
          return stageRun(db!, result, run, versionBefore);
        } catch (err) {
          throw sqliteStop(dbPath, err);
        }
      },
      commit: () => {
        try {
          db!.exec('COMMIT');
          db!.close();
        } catch (err) {
          throw sqliteStop(dbPath, err);
        }
      },
      abandon: () => {
        try {
          closeAndForget();
        } catch {
          // Best effort: the error the caller reports is what the user needs to see.
        }
      },
    };
    return session;
  } catch (err) {
    try {
      if (open || db) closeAndForget();
    } catch {
      // the error below is the one to report
    }
    throw sqliteStop(dbPath, err);
  }
}

function stageRun(db: Database, result: RecalcResult, run: { timestamp: string }, versionBefore: number): RecordSummary {
  const r = runRecord(result, run);
  const controls = controlRecords(result);
  const insertRun = db.prepare(
    `INSERT INTO runs (run_time, worklist_name, worklist_sha256, method_name, method_sha256, concentration_unit)
     VALUES (?, ?, ?, ?, ?, ?) ON CONFLICT (worklist_sha256, method_sha256) DO NOTHING`,
  );
  const insertMethod = db.prepare('INSERT INTO methods (sha256, name, text) VALUES (?, ?, ?) ON CONFLICT (sha256) DO NOTHING');
  const findRun = db.prepare('SELECT id FROM runs WHERE worklist_sha256 = ? AND method_sha256 = ?').pluck();
  const insertControl = db.prepare(
    `INSERT INTO controls (run_id, row_number, sample_id, batch_id, analyte, sample_type, qc_level,
                           recovery_pct, rpd_pct, status, recovery_low, recovery_high, flags, result, nondetect)
     VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
  );
  const info = insertRun.run(r.runTime, r.worklistName, r.worklistSha256, r.methodName, r.methodSha256, r.concentrationUnit);
  if (info.changes === 0) {
    const runId = findRun.get(r.worklistSha256, r.methodSha256) as number;
    return { runId, added: 0, alreadyRecorded: true, versionBefore };
  }
  const runId = Number(info.lastInsertRowid);
  // The method's own text, once per version: the figures read what each method asked for (figures/settings.ts).
  insertMethod.run(result.method.sha256, result.method.name, result.method.text);
  for (const c of controls) {
    insertControl.run(
      runId,
      c.rowNumber,
      c.sampleId,
      c.batchId,
      c.analyte,
      c.sampleType,
      c.qcLevel,
      sqlNumber(c.recoveryPct),
      sqlNumber(c.rpdPct),
      c.status,
      sqlNumber(c.recoveryLow),
      sqlNumber(c.recoveryHigh),
      c.flags,
      sqlNumber(c.result),
      c.nondetect ? 1 : 0,
    );
  }
  return { runId, added: controls.length, alreadyRecorded: false, versionBefore };
}

/**
 * Record the control rows of a run, on its own (the command line records in the
 * same step as it writes the outputs, through openHistory). Creates the file when
 * missing and migrates an older history to the latest schema first.
 */
export async function recordRun(dbPath: string, result: RecalcResult, run: { timestamp: string }): Promise<RecordSummary> {
  const session = await openHistory(dbPath);
  let summary: RecordSummary;
  try {
    summary = session.stage(result, run);
  } catch (err) {
    session.abandon();
    throw err;
  }
  session.commit();
  return summary;
}

/**
 * Every control row in the history, in run order: by run time, then by the order
 * the runs were recorded, then by worklist row. Opens the file read-only and
 * reads any schema version from 1 to the latest without migrating it.
 */
export async function readHistory(dbPath: string): Promise<HistoryRow[]> {
  return (await readHistoryWithMethods(dbPath)).rows;
}

/** A method as a run recorded it (schema version 3 on). */
export interface RecordedMethod {
  sha256: string;
  name: string;
  text: string;
}

/**
 * readHistory, with the text of every method the history's runs used (none for a
 * history written before schema version 3) and the file's schema version.
 */
export async function readHistoryWithMethods(dbPath: string): Promise<{ rows: HistoryRow[]; methods: Map<string, RecordedMethod>; version: number }> {
  if (!existsSync(dbPath)) {
    throw new StopError('input', 'does not exist; record runs into it first with "phasebook recalc --history"', { file: dbPath });
  }
  const Sqlite = await loadSqlite();
  return withDatabase(Sqlite, dbPath, { readonly: true }, (db) => {
    const version = verifyHistory(db, dbPath);
    if (version === 0) return { rows: [], methods: new Map(), version };
    const methods = new Map<string, RecordedMethod>();
    if (version >= 3) {
      for (const m of db.prepare('SELECT sha256, name, text FROM methods').all() as RecordedMethod[]) methods.set(m.sha256, m);
    }
    return { rows: selectRows(db, version), methods, version };
  });
}

function selectRows(db: Database, version: number): HistoryRow[] {
  const since2 = version >= 2;
  const since3 = version >= 3;
  const rows = db
    .prepare(
      `SELECT r.id AS runId, r.run_time AS runTime, r.worklist_name AS worklistName, r.worklist_sha256 AS worklistSha256,
              r.method_name AS methodName, r.method_sha256 AS methodSha256,
              c.row_number AS rowNumber, c.sample_id AS sampleId, c.batch_id AS batchId, c.analyte, c.sample_type AS sampleType,
              c.qc_level AS qcLevel, c.recovery_pct AS recoveryPct, c.rpd_pct AS rpdPct, c.status,
              ${since2 ? 'c.recovery_low' : 'NULL'} AS recoveryLow, ${since2 ? 'c.recovery_high' : 'NULL'} AS recoveryHigh,
              ${since2 ? 'c.flags' : "''"} AS flags,
              ${since3 ? 'c.result' : 'NULL'} AS result, ${since3 ? 'c.nondetect' : 'NULL'} AS nondetect,
              ${since3 ? 'r.concentration_unit' : 'NULL'} AS concentrationUnit
       FROM controls c JOIN runs r ON r.id = c.run_id
       ORDER BY r.run_time, r.id, c.row_number, c.id`,
    )
    .all() as Array<Record<string, unknown>>;
  return rows.map((row) => ({
    ...(row as unknown as HistoryRow),
    recoveryPct: fromSql(row.recoveryPct),
    rpdPct: fromSql(row.rpdPct),
    recoveryLow: fromSql(row.recoveryLow),
    recoveryHigh: fromSql(row.recoveryHigh),
    result: fromSql(row.result),
    nondetect: row.nondetect === null || row.nondetect === undefined ? undefined : row.nondetect === 1,
    concentrationUnit: typeof row.concentrationUnit === 'string' ? row.concentrationUnit : '',
  }));
}

/**
 * Check that an open file is a phasebook history this version can use.
 * Returns its schema version: 0 for an empty file (no tables yet).
 * Writes nothing, so a foreign file is left exactly as it was.
 */
export function verifyHistory(db: Database, file: string): number {
  const objects = db
    .prepare("SELECT type, name FROM sqlite_schema WHERE name NOT LIKE 'sqlite_%' ORDER BY name")
    .all() as Array<{ type: string; name: string }>;
  const version = userVersion(db);
  if (objects.length === 0 && version === 0) return 0;
  let marker: unknown;
  try {
    if (objects.some((o) => o.type === 'table' && o.name === 'meta')) {
      marker = db.prepare("SELECT value FROM meta WHERE key = 'application'").pluck().get();
    }
  } catch (err) {
    // A foreign "meta" table with other columns has no marker; a damaged page is damage, not a foreign file.
    const code = (err as { code?: unknown } | null)?.code;
    if (typeof code === 'string' && (code.startsWith('SQLITE_CORRUPT') || code === 'SQLITE_NOTADB' || code.startsWith('SQLITE_IOERR'))) throw err;
    marker = undefined;
  }
  if (marker !== APPLICATION_MARKER) {
    const tables = objects.filter((o) => o.type === 'table').map((o) => `"${o.name}"`);
    throw new StopError(
      'input',
      `expected a phasebook QC history, got an SQLite database without the phasebook marker (${tables.length ? `tables ${tables.join(', ')}` : 'no tables'})`,
      { file },
    );
  }
  if (version > LATEST_VERSION) {
    throw new StopError(
      'input',
      `the QC history has schema version ${version}, written by a newer phasebook; this phasebook reads versions 1 to ${LATEST_VERSION}`,
      { file },
    );
  }
  if (version < 1) {
    throw new StopError('input', `the QC history is damaged: it carries the phasebook marker but schema version "${version}"`, { file });
  }
  return version;
}

/** Open, run `fn`, close; SQLite errors become located StopErrors. */
function withDatabase<T>(Sqlite: SqliteConstructor, file: string, options: { readonly: boolean }, fn: (db: Database) => T): T {
  if (!options.readonly && !existsSync(dirname(file) || '.')) {
    throw new StopError('output', `the QC history cannot be created: the folder ${dirname(file)} does not exist`, { file });
  }
  let db: Database | undefined;
  try {
    db = new Sqlite(file, { readonly: options.readonly, fileMustExist: options.readonly, timeout: 5000 });
    return fn(db);
  } catch (err) {
    throw sqliteStop(file, err);
  } finally {
    db?.close();
  }
}

/** A StopError for what SQLite or the package loader said; a bug passes through unchanged. */
function sqliteStop(file: string, err: unknown): unknown {
  if (err instanceof StopError) return err;
  if (isMissingPackage(err)) return new StopError('usage', MISSING_PACKAGE);
  const code = (err as { code?: unknown } | null)?.code;
  if (typeof code !== 'string' || !code.startsWith('SQLITE_')) return err;
  const detail = (err as Error).message;
  if (code === 'SQLITE_NOTADB') {
    return new StopError('input', 'expected a phasebook QC history, got a file that is not an SQLite database', { file });
  }
  if (code.startsWith('SQLITE_CORRUPT')) return new StopError('input', `the QC history is damaged: ${detail}`, { file });
  if (code.startsWith('SQLITE_BUSY') || code.startsWith('SQLITE_LOCKED')) {
    return new StopError('output', 'the QC history is busy: another process holds it; try again', { file });
  }
  if (code.startsWith('SQLITE_READONLY')) return new StopError('output', 'the QC history cannot be written: it is read-only', { file });
  if (code.startsWith('SQLITE_CANTOPEN')) {
    return new StopError('output', 'the QC history cannot be opened: check that it is a file and that you may read and write it', { file });
  }
  if (code.startsWith('SQLITE_FULL')) return new StopError('output', 'the QC history cannot be written: the disk is full', { file });
  return new StopError('input', `the QC history could not be used: ${detail}`, { file });
}

function isMissingPackage(err: unknown): boolean {
  const e = err as { code?: unknown; message?: unknown } | null;
  if (!e) return false;
  if (e.code === 'ERR_MODULE_NOT_FOUND' || e.code === 'MODULE_NOT_FOUND' || e.code === 'ERR_DLOPEN_FAILED') return true;
  return typeof e.message === 'string' && /Could not locate the bindings file|better_sqlite3\.node/.test(e.message);
}

function sqlNumber(x: number): number | null {
  return Number.isFinite(x) ? x : null;
}

function fromSql(x: unknown): number {
  return typeof x === 'number' ? x : NaN;
}
