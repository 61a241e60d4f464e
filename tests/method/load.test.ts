import { describe, expect, it } from 'vitest';
import { compileMethod } from '../../src/engine/evaluate.js';
import { StopError } from '../../src/errors.js';
import { loadMethod, parseMethod } from '../../src/method/load.js';

function stop(text: string): string {
  try {
    compileMethod(parseMethod(text, { file: 'm.yaml' }));
  } catch (err) {
    if (err instanceof StopError) return err.describe();
    throw err;
  }
  throw new Error('expected a StopError');
}

const OK_FORMULAS = 'formulas:\n  - name: y\n    expr: extract_conc * 2\n';

describe('method files', () => {
  it('the shipped generic method loads, with the generic limits of DESIGN.md §5', () => {
    const m = loadMethod('templates/generic-lle.yaml');
    expect(m.name).toBe('generic-lle');
    expect(m.units).toEqual({ volume: 'mL', concentration: 'ng/mL', extract_concentration: 'ng/mL' });
    expect(m.limits.lcs).toMatchObject({ recovery: [70, 130], rpd_max: 20 });
    expect(m.limits.qc).toMatchObject({ recovery: [85, 115], levels: { lloq: { recovery: [80, 120] } } });
    expect(m.formulas.map((f) => f.name)).toEqual([
      'distribution_ratio',
      'extraction_efficiency_pct',
      'pre_extraction_conc',
      'spike_recovery_pct',
      'rpd_pct',
    ]);
    expect(m.sha256).toMatch(/^[0-9a-f]{64}$/);
    expect(() => compileMethod(m)).not.toThrow();
  });

  it.each([
    ['name: x\nformulas: [', 'm.yaml, line 2: cannot read the method as YAML'],
    ['- just\n- a list', 'm.yaml, line 1: expected a method (a YAML mapping with name and formulas), got nothing usable'],
    ['name: x\n', 'm.yaml, line 1, key "(top)": missing required key "formulas"'],
    [`name: x\ncolour: blue\n${OK_FORMULAS}`, 'm.yaml, line 2, key "colour": unknown key "colour"'],
    [`name: x\nlimits:\n  lcs:\n    recovery: [70]\n${OK_FORMULAS}`, 'm.yaml, line 4, key "limits.lcs.recovery": must NOT have fewer than 2 items, got [70]'],
    [`name: x\nqc:\n  outlier_test: chauvenet\n${OK_FORMULAS}`, 'm.yaml, line 3, key "qc.outlier_test": expected one of "grubbs", "dixon", "none", got "chauvenet"'],
    [`name: x\nqc:\n  outlier_test: dixon\n  alpha: 0.03\n${OK_FORMULAS}`, 'm.yaml, line 4, key "qc.alpha": expected an alpha of 0.1, 0.05, 0.04, 0.02, 0.01 for Dixon\'s Q test, got 0.03'],
    [`name: x\nfields:\n  volume_sample: { aliases: [V] }\n${OK_FORMULAS}`, 'm.yaml, line 3, key "fields.volume_sample": "volume_sample" is not a canonical field'],
    [`name: x\nanalytes:\n  A: { acid_base: acid }\n${OK_FORMULAS}`, 'm.yaml, line 3, key "analytes.A.acid_base": analyte "A" is marked acid but has no pka'],
    ['name: x\nformulas:\n  - name: y\n    expr: import("fs")\n', 'm.yaml, line 4, key "formulas[0].expr": formula "y": the function "import" is not allowed'],
    ['name: x\nformulas:\n  - name: a\n    expr: b + 1\n  - name: b\n    expr: a * 2\n', 'm.yaml, line 4, key "formulas": the formula columns depend on each other in a cycle: a → b → a'],
    ['name: x\nformulas:\n  - name: sample_volume\n    expr: "1"\n', 'm.yaml, line 3, key "formulas[0].name": formula column "sample_volume" has the name of an input field; choose another name'],
    ['name: x\nformulas:\n  - name: y\n    expr: "1"\n  - name: y\n    expr: "2"\n', 'm.yaml, line 5, key "formulas[1].name": formula column "y" is defined twice'],
  ])('%j stops with %j', (text, message) => {
    expect(stop(text).startsWith(message)).toBe(true);
  });

  it('a missing method file stops with its name', () => {
    expect(() => loadMethod('templates/nope.yaml')).toThrow('cannot read the method file: no such file');
  });

  it('per-analyte limits merge over the defaults type by type', () => {
    const m = parseMethod(`name: x\nlimits:\n  ms: { recovery: [60, 140] }\n${OK_FORMULAS}`, { file: 'm.yaml' });
    expect(m.limits.ms).toMatchObject({ recovery: [60, 140], rpd_max: 20 });
    expect(m.limits.lcs).toMatchObject({ recovery: [70, 130] });
  });
});

describe('method files that are too big, too deep or say a key twice (issue 19)', () => {
  it.each([
    ['a key twice at the top', 'name: a\ntitle: b\nname: c\n', 'm.yaml, line 3: cannot read the method as YAML: the key "name" is given twice (first at line 1)'],
    [
      'a lab code twice',
      `name: x\nsample_types:\n  MB: blank\n  BS: lcs\n  MB: lcs\n${OK_FORMULAS}`,
      'm.yaml, line 5: cannot read the method as YAML: the key "MB" is given twice (first at line 3)',
    ],
    ['a flow mapping', `name: x\nunits: { volume: mL, volume: L }\n${OK_FORMULAS}`, 'm.yaml, line 2: cannot read the method as YAML: the key "volume" is given twice (first at line 2)'],
    [
      'nesting thousands deep',
      `name: x\ndeep: ${'['.repeat(3000)}${']'.repeat(3000)}\n`,
      'm.yaml, line 2: cannot read the method as YAML: it is nested too deeply to read (a method needs a few levels)',
    ],
  ])('%s is a located error', (_name, text, message) => {
    expect(stop(text)).toBe(message);
  });

  it('1 and "1" are different keys, as YAML scalars', () => {
    expect(stop(`name: x\nextra:\n  1: a\n  "1": b\n${OK_FORMULAS}`)).toContain('unknown key "extra"');
  });

  it('a text longer than a method may be is refused before it is parsed', () => {
    const text = `name: x\n# ${'x'.repeat(1024 * 1024)}\n${OK_FORMULAS}`;
    expect(stop(text)).toBe('m.yaml: is 1,048,636 characters long, more than the 1,048,576 a method file may hold');
  });

  it('finds a repeated key among 40,000 lab codes in one pass (the YAML library\'s own check took over 20 s)', () => {
    // No timing here (speed lives in npm run bench): this checks the answer on the large case.
    const codes = Array.from({ length: 40_000 }, (_, i) => `  C${i}: sample\n`).join('');
    expect(stop(`name: x\nsample_types:\n${codes}  C17: blank\n${OK_FORMULAS}`)).toBe(
      'm.yaml, line 40003: cannot read the method as YAML: the key "C17" is given twice (first at line 20)',
    );
  });
});

describe('units in the method are units of their kind (issue 13)', () => {
  it.each([
    [`name: x\nunits:\n  concentration: furlong\n${OK_FORMULAS}`, 'm.yaml, line 3, key "units.concentration": cannot read "furlong" as a unit; expected a concentration unit such as ng/mL, ug/L or nmol/L'],
    [`name: x\nunits:\n  volume: ng/mL\n${OK_FORMULAS}`, 'm.yaml, line 3, key "units.volume": "ng/mL" is not a unit of this kind; expected a volume unit such as mL, uL or L'],
    [`name: x\nfields:\n  sample_volume: { unit: mg/L }\n${OK_FORMULAS}`, 'm.yaml, line 3, key "fields.sample_volume.unit": "mg/L" is not a unit of this kind; expected a volume unit such as mL, uL or L'],
    [`name: x\nfields:\n  dilution: { unit: mL }\n${OK_FORMULAS}`, 'm.yaml, line 3, key "fields.dilution.unit": dilution has no unit; expected no unit key here'],
  ])('%#: refused with file, line and key', (text, message) => {
    expect(stop(text)).toBe(message);
  });

  it.each(['cm³', 'μL', 'ml', 'dm³'])('accepts the volume unit %s', (unit) => {
    const m = parseMethod(`name: x\nunits:\n  volume: ${unit}\n${OK_FORMULAS}`, { file: 'm.yaml' });
    expect(m.units.volume).toBe(unit.replace('³', '^3').replace('μ', 'u'));
  });
});

describe('type codes with a level (issue 13)', () => {
  it('maps a code onto a type and a QC level; a level on another type is refused', () => {
    const m = parseMethod(`name: x\nsample_types:\n  "QC Low": { type: qc, level: Low }\n  Std: calibrator\n${OK_FORMULAS}`, { file: 'm.yaml' });
    expect([...m.sampleTypes]).toEqual([['qc low', 'qc'], ['std', 'calibrator']]);
    expect([...m.sampleTypeLevels]).toEqual([['qc low', 'low']]);
    expect(stop(`name: x\nsample_types:\n  BS: { type: lcs, level: low }\n${OK_FORMULAS}`)).toBe(
      'm.yaml, line 3, key "sample_types.BS.level": a QC level goes with the type qc, got the type lcs',
    );
  });
});

describe('the result column and its unit', () => {
  // Reporting limits, blank limits, spikes and reported results are all in the concentration unit.
  const method = (unit: string) =>
    `name: x\nunits: { concentration: ug/L }\nformulas:\n  - name: pre_extraction_conc\n    unit: ${unit}\n    expr: extract_conc * final_volume / sample_volume\n`;
  it.each(['concentration', 'ug/L', 'µg/L'])('takes pre_extraction_conc in %s', (unit) => {
    expect(parseMethod(method(unit), { file: 'm.yaml' }).formulas[0]!.name).toBe('pre_extraction_conc');
  });
  it('refuses it in another unit, naming the line', () => {
    let err: unknown;
    try {
      parseMethod(method('ng/L'), { file: 'm.yaml' });
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(StopError);
    expect((err as StopError).describe()).toBe(
      'm.yaml, line 5, key "formulas[0].unit": formula "pre_extraction_conc" is the result, which limits, spikes and reported results are in: expected its unit to be the concentration unit (ug/L) or "concentration", got "ng/L"',
    );
  });
});
