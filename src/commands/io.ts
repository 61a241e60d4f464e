/**
 * What every subcommand is given instead of touching the process (cli.ts is the
 * only module that prints or exits; tests pass their own), and the exit codes of
 * DESIGN.md: 0 all clear, 1 findings (failed QC, input errors, differences),
 * 2 the run stopped.
 */
export const EXIT = { ok: 0, findings: 1, stop: 2 } as const;

export interface CommandIo {
  exit: (code: number) => void;
  /** Results (the report, the plan, difference lines); default process.stdout. */
  stdout?: (text: string) => void;
  /** Summaries and errors; default process.stderr. */
  stderr?: (text: string) => void;
}
