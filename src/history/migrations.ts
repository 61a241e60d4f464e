/**
 * The QC history's schema, one migration per version. `PRAGMA user_version`
 * holds the version; the `meta` table holds the application marker that tells a
 * phasebook history from any other SQLite file.
 *
 * A migration never edits an earlier one: a file written at version 1 is brought
 * to the latest version by running 2, 3, … in order, each in its own transaction
 * together with the new user_version.
 */
import type { Database } from 'better-sqlite3';

/** Value of meta.application in every phasebook QC history. */
export const APPLICATION_MARKER = 'phasebook QC history';

export interface Migration {
  /** The schema version this migration produces. */
  version: number;
  description: string;
  up(db: Database): void;
}

export const MIGRATIONS: readonly Migration[] = [
  {
    version: 1,
    description: 'runs, their control rows, and the application marker',
    up(db) {
      db.exec(`
        CREATE TABLE meta (
          key   TEXT PRIMARY KEY,
          value TEXT NOT NULL
        ) STRICT;
        CREATE TABLE runs (
          id              INTEGER PRIMARY KEY,
          run_time        TEXT NOT NULL,
          worklist_name   TEXT NOT NULL,
          worklist_sha256 TEXT NOT NULL,
          method_name     TEXT NOT NULL,
          method_sha256   TEXT NOT NULL,
          UNIQUE (worklist_sha256, method_sha256)
        ) STRICT;
        CREATE TABLE controls (
          id           INTEGER PRIMARY KEY,
          run_id       INTEGER NOT NULL REFERENCES runs (id) ON DELETE CASCADE,
          row_number   INTEGER NOT NULL,
          sample_id    TEXT NOT NULL,
          batch_id     TEXT NOT NULL,
          analyte      TEXT NOT NULL,
          sample_type  TEXT NOT NULL,
          qc_level     TEXT NOT NULL,
          recovery_pct REAL,
          rpd_pct      REAL,
          status       TEXT NOT NULL CHECK (status IN ('pass', 'fail'))
        ) STRICT;
      `);
      db.prepare('INSERT INTO meta (key, value) VALUES (?, ?)').run('application', APPLICATION_MARKER);
    },
  },
  {
    version: 2,
    description: 'the limits that judged each control and its flags; an index for reading one series in run order',
    up(db) {
      db.exec(`
        ALTER TABLE controls ADD COLUMN recovery_low REAL;
        ALTER TABLE controls ADD COLUMN recovery_high REAL;
        ALTER TABLE controls ADD COLUMN flags TEXT NOT NULL DEFAULT '';
        CREATE INDEX controls_series ON controls (analyte, sample_type, run_id, row_number);
      `);
    },
  },
  {
    version: 3,
    description:
      "each control's result and whether it was detected, the run's concentration unit, and the text of every method used " +
      '(for the detection limit from blanks and low-level spikes, and the figures each method asks for)',
    up(db) {
      // Rows recorded before version 3 keep NULL here: their result is unknown, which is not the same as not detected.
      db.exec(`
        ALTER TABLE controls ADD COLUMN result REAL;
        ALTER TABLE controls ADD COLUMN nondetect INTEGER CHECK (nondetect IN (0, 1));
        ALTER TABLE runs ADD COLUMN concentration_unit TEXT;
        CREATE TABLE methods (
          sha256 TEXT PRIMARY KEY,
          name   TEXT NOT NULL,
          text   TEXT NOT NULL
        ) STRICT;
      `);
    },
  },
];

export const LATEST_VERSION = MIGRATIONS[MIGRATIONS.length - 1]!.version;

/**
 * Bring the file from its current user_version up to `to` (default the latest).
 * Each step runs in an IMMEDIATE transaction that re-reads the version first, so
 * two processes migrating at once do not both apply a step.
 * Returns the version the file had before.
 */
export function migrate(db: Database, options: { to?: number } = {}): number {
  const to = options.to ?? LATEST_VERSION;
  const before = userVersion(db);
  for (const m of MIGRATIONS) {
    if (m.version > to) break;
    db.transaction(() => {
      if (userVersion(db) >= m.version) return;
      m.up(db);
      db.pragma(`user_version = ${m.version}`);
    }).immediate();
  }
  return before;
}

export function userVersion(db: Database): number {
  return db.pragma('user_version', { simple: true }) as number;
}
