/**
 * Tests that need a program from outside (LibreOffice, Chromium, openpyxl) run where it
 * is installed. Where it is missing they are skipped on a developer's machine, but on CI
 * (CI set, as .ci/run's environment has it) a missing program is an error: CI installs
 * them, so a skip there would hide that a check did not run.
 */
export function skipWithout(program: string, installed: boolean): boolean {
  if (installed) return false;
  if (process.env.CI) throw new Error(`${program} is not installed, and CI is set: .ci/run installs it; these tests must run on CI`);
  return true;
}
