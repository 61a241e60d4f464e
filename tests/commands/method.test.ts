import { existsSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { CommanderError } from 'commander';
import { describe, expect, it } from 'vitest';
import { registerMethodCommand } from '../../src/commands/method.js';
import { runCommand } from '../helpers/command.js';
import { StopError } from '../../src/errors.js';
import { parseMethod } from '../../src/method/load.js';

const ROOT = join(import.meta.dirname, '../..');

/** Run `phasebook method ...` in process. A StopError or CommanderError thrown by an action is returned. */
const method = (args: string[]) => runCommand(registerMethodCommand, ['method', ...args]);

function tempFile(name: string, text?: string): string {
  const path = join(mkdtempSync(join(tmpdir(), 'phasebook-method-')), name);
  if (text !== undefined) writeFileSync(path, text);
  return path;
}

describe('method check', () => {
  it.each(['generic-lle', 'surface-water', 'plasma-amitriptyline', 'fruit-juice'])('%s.yaml is valid: exit 0 and a plain description', async (name) => {
    const r = await method(['check', join(ROOT, 'templates', `${name}.yaml`)]);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(new RegExp(`^Method ${name}, version [^:]+: valid\\n`));
    for (const section of ['Units the method computes in', 'Fields (worklist header', 'Sample types', 'Analytes', 'Acceptance limits', 'QC options', 'Formula columns, in the order they are evaluated']) {
      expect(r.stdout).toContain(section);
    }
    expect(r.stderr).toBe('');
  });

  it.each([
    {
      what: 'an unknown key',
      text: 'name: m\nlimits:\n  lcs: { recovry: [70, 130] }\nformulas:\n  - { name: x, expr: extract_conc }\n',
      message: 'line 3, key "limits.lcs.recovry": unknown key "recovry"',
    },
    {
      what: 'a sample type that is not canonical',
      text: 'name: m\nsample_types:\n  BS: spike\nformulas:\n  - { name: x, expr: extract_conc }\n',
      message: 'line 3, key "sample_types.BS": expected one of "sample", "blank", "lcs", "lcsd", "ms", "msd", "dup", "qc", "mdl", "calibrator", got "spike"',
    },
    {
      what: 'a refused function',
      text: 'name: m\nformulas:\n  - name: x\n    expr: evaluate("1")\n',
      message: 'line 4, key "formulas[0].expr": formula "x": the function "evaluate" is not allowed',
    },
    {
      what: 'a cycle',
      text: 'name: m\nformulas:\n  - { name: a, expr: b + 1 }\n  - { name: b, expr: a + 1 }\n',
      message: 'line 3, key "formulas": the formula columns depend on each other in a cycle: a → b → a',
    },
    {
      what: 'a base without pKa',
      text: 'name: m\nanalytes:\n  X: { acid_base: base }\nformulas:\n  - { name: x, expr: extract_conc }\n',
      message: 'line 3, key "analytes.X.acid_base": analyte "X" is marked base but has no pka',
    },
  ])('$what: exit 2 with the located message', async ({ text, message }) => {
    const file = tempFile('bad.yaml', text);
    const r = await method(['check', file]);
    expect(r.code).toBe(2);
    expect(r.stderr).toBe(`phasebook: ${file}, ${message}\nThe method is not valid.\n`);
    expect(r.stdout).toBe('');
  });

  it('a missing file: exit 2 naming it', async () => {
    const file = join(tmpdir(), 'phasebook-no-such-method.yaml');
    const r = await method(['check', file]);
    expect(r.code).toBe(2);
    expect(r.stderr).toBe(`phasebook: ${file}: cannot read the method file: no such file\nThe method is not valid.\n`);
  });
});

describe('method draft', () => {
  const worklist = join(ROOT, 'samples/tarnmoor-tmr204-run07.csv');

  it('prints the draft to stdout and a summary to stderr', async () => {
    const r = await method(['draft', worklist]);
    expect(r.code).toBe(0);
    const m = parseMethod(r.stdout, { file: 'stdout' });
    expect(m.name).toBe('tarnmoor-tmr204-run07');
    expect(r.stdout).toMatch(/^# yaml-language-server: \$schema=templates\/method\.schema\.json$/m); // relative to the working folder
    expect(r.stderr).toBe(
      [
        'phasebook: placed 12 of 15 headers on canonical fields',
        '  not placed: "Well", "Inj Vol [µL]", "Comment"',
        '  sample-type codes: 4 found, 2 guessed',
        '  analytes: 2 found, their data to fill in',
        'Finish the method, then run phasebook method check on it.',
        '',
      ].join('\n'),
    );
  });

  it('writes --out, refuses to replace it without --force, replaces it with --force', async () => {
    const out = tempFile('draft.yaml');
    const first = await method(['draft', worklist, '--out', out, '--name', 'tmr-plasma']);
    expect(first.code).toBe(0);
    expect(first.stdout).toBe('');
    expect(first.stderr).toContain(`Wrote ${out}. Finish it, then run: phasebook method check ${out}`);
    const text = readFileSync(out, 'utf8');
    expect(parseMethod(text, { file: out }).name).toBe('tmr-plasma');

    const again = await method(['draft', worklist, '--out', out]);
    expect(again.error).toBeInstanceOf(StopError);
    expect((again.error as StopError).describe()).toBe(`${out}: already exists; use --force to replace it`);

    writeFileSync(out, 'old');
    const forced = await method(['draft', worklist, '--out', out, '--force']);
    expect(forced.code).toBe(0);
    expect(readFileSync(out, 'utf8')).not.toBe('old');
  });

  it('the schema hint is relative to the draft, so an editor finds the schema', async () => {
    const out = tempFile('draft.yaml');
    await method(['draft', worklist, '--out', out]);
    const ref = /\$schema=(\S+)/.exec(readFileSync(out, 'utf8'))![1]!;
    expect(existsSync(join(out, '..', ref))).toBe(true);
  });

  it.each([
    { args: ['draft', worklist, '--name', 'no spaces'], message: 'expected a name of letters, digits, "_", "." and "-", starting with a letter or digit, got "no spaces"' },
    { args: ['draft'], message: "missing required argument 'worklist'" },
  ])('usage error: $message', async ({ args, message }) => {
    const r = await method(args);
    expect(r.error).toBeInstanceOf(CommanderError);
    expect(r.stderr).toContain(message);
  });

  it('an unreadable worklist stops with its reason', async () => {
    const r = await method(['draft', join(tmpdir(), 'phasebook-no-such-worklist.csv')]);
    expect(r.error).toBeInstanceOf(StopError);
    expect((r.error as StopError).kind).toBe('input');
  });
});
