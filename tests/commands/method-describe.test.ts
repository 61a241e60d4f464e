import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { compileMethod } from '../../src/engine/evaluate.js';
import { describeMethod, judgingWarnings } from '../../src/commands/method/describe.js';
import { loadMethod, parseMethod } from '../../src/method/load.js';

const ROOT = join(import.meta.dirname, '../..');
const describeFile = (name: string) => {
  const m = loadMethod(join(ROOT, 'templates', name));
  return describeMethod(m, compileMethod(m));
};
const describeText = (text: string) => {
  const m = parseMethod(text, { file: 'inline.yaml' });
  return describeMethod(m, compileMethod(m));
};

/** The lines of one analyte's block in the limits section. */
function limitsBlock(text: string, analyte: string): string {
  const section = text.slice(text.indexOf('Acceptance limits'), text.indexOf('QC options'));
  const start = section.indexOf(`\n  ${analyte}`);
  const next = section.slice(start + 1).search(/\n {2}\S/);
  return next < 0 ? section.slice(start) : section.slice(start, start + 1 + next);
}

describe('describeMethod on the shipped methods', () => {
  const water = describeFile('surface-water.yaml');
  const plasma = describeFile('plasma-amitriptyline.yaml');
  const juice = describeFile('fruit-juice.yaml');
  const generic = describeFile('generic-lle.yaml');

  it.each([
    ['surface-water', water, 'Method surface-water, version 2026.11: valid'],
    ['plasma', plasma, 'Method plasma-amitriptyline, version 2026.3: valid'],
    ['fruit-juice', juice, 'Method fruit-juice, version 3: valid'],
    ['generic', generic, 'Method generic-lle, version 1: valid'],
  ])('%s: starts by naming the method and saying it is valid', (_name, text, first) => {
    expect(text.split('\n')[0]).toBe(first);
  });

  it.each([
    // The lab's headers from each method file, beside the canonical field and the unit it is read in.
    [water, /^ {2}sample_id +"Sample Name" or "sample_id" +text +required$/m],
    [water, /^ {2}extract_conc +"Extract Result" or "extract_conc" +ng\/mL +required$/m],
    [water, /^ {2}spike_conc +"Spike Added" or "spike_conc" +ug\/L +empty$/m],
    [water, /^ {2}final_volume +"Final Vol" or "final_volume" +mL +extractions × solvent_volume$/m],
    [plasma, /^ {2}sample_volume +"Plasma Vol" or "sample_volume" +uL +required$/m],
    [plasma, /^ {2}extractions +"extractions" +number +default 1$/m],
    [juice, /^ {2}extract_conc +"Extract" or "extract_conc" +ug\/mL +required$/m],
    [juice, /^ {2}spike_conc +"Added" or "spike_conc" +mg\/L +empty$/m],
    [generic, /^ {2}sample_id +"sample_id" +text +required$/m],
  ])('lists fields, lab headers and units: %#', (text, line) => {
    expect(text).toMatch(line);
  });

  it('keeps the lab codes as the method writes them', () => {
    expect(water).toContain('  SAMP → sample\n  MB → blank\n  BS → lcs\n  BSD → lcsd\n  MS → ms\n  MSD → msd\n  DUP → dup\n');
    expect(plasma).toContain('  Zero → blank\n');
    expect(generic).toContain('  the method names no lab codes');
  });

  it('gives the neutral fraction and D at the method pH (base: f = 1/(1 + 10^(pKa − pH)), Harris; Harvey §7.7)', () => {
    // Amitriptyline: log K 0.6, pKa 9.4, pH 12 → f = 1/(1 + 10^−2.6) = 0.997494, D = 10^0.6 · f = 3.9711 (computed)
    expect(plasma).toContain('K 3.981 (log K 0.6), base with pKa 9.4, extracted at pH 12: 99.75 % neutral, D 3.971');
    // Nortriptyline: log K 0.4, pKa 10.1, pH 12 → f = 1/(1 + 10^−1.9) = 0.987569, D = 2.4806 (computed)
    expect(plasma).toContain('K 2.512 (log K 0.4), base with pKa 10.1, extracted at pH 12: 98.76 % neutral, D 2.481');
    expect(water).toContain('K 320, acid with pKa 7.9; the pH comes from the worklist');
  });

  it('merges limits: analyte over method over the generic defaults (DESIGN.md §5)', () => {
    const naphthalene = limitsBlock(water, 'Naphthalene');
    expect(naphthalene).toMatch(/ms +recovery 60–130 %, RPD ≤ 25 % +\(recovery from analyte Naphthalene ms; RPD from method ms\)/);
    expect(naphthalene).toMatch(/lcs +recovery 70–130 %, RPD ≤ 20 %/);
    expect(naphthalene).toContain('blank: result below the reporting limit 0.05 ug/L');
    const surrogate = limitsBlock(water, '2-Fluorobiphenyl');
    expect(surrogate).toMatch(/surrogate +recovery 60–120 %/);
    expect(surrogate).not.toMatch(/\blcs\b/);
    // The control types shown are those the lab's codes name.
    expect(water).toContain('control types shown: lcs, lcsd, ms, msd, dup (the types the lab codes name)');
    expect(plasma).toContain('control types shown: qc (the types the lab codes name)');
    expect(generic).toContain('control types shown: lcs, lcsd, ms, msd, dup, qc, mdl\n');
  });

  it('shows the qc levels with their own limits (FDA BMV 2018 / ICH M10: ±15 %, ±20 % at the LLOQ)', () => {
    const ami = limitsBlock(plasma, 'Amitriptyline');
    expect(ami).toMatch(/qc +recovery 85–115 % +\(recovery from method qc\)/);
    expect(ami).toMatch(/qc at lloq +recovery 80–120 % +\(recovery from method qc at level lloq\)/);
    expect(plasma).toContain('run rule: on; at least 2/3 of all qc rows and 50 % of those at each level must pass');
    expect(juice).toContain('outlier test: none');
  });

  it('lists formula columns in evaluation order with what each reads', () => {
    const formulas = water.slice(water.indexOf('Formula columns'));
    const names = [...formulas.matchAll(/^ {2}(\d+)\. (\w+)/gm)].map((m) => `${m[1]}.${m[2]}`);
    expect(names).toEqual(['1.distribution_ratio', '2.extraction_efficiency_pct', '3.pre_extraction_conc', '4.spike_recovery_pct', '5.rpd_pct']);
    expect(formulas).toContain('3. pre_extraction_conc [ug/L] = extract_conc * dilution * final_volume / (sample_volume * extraction_efficiency_pct / 100)');
    expect(formulas).toContain('reads formula column distribution_ratio; fields sample_volume, solvent_volume, extractions');
    expect(formulas).toContain('pre_extraction_conc of the parent row');
    expect(formulas).toContain('reads formula column pre_extraction_conc; pre_extraction_conc of the paired row');
    expect(formulas).toContain('surrogate (1 when the method marks the analyte as a surrogate, else 0)');
  });
});

describe('describeMethod on small methods', () => {
  it('evaluates a formula after the ones it reads, whatever order the file gives', () => {
    const text = describeText(
      [
        'name: ordered',
        'formulas:',
        '  - name: doubled',
        '    expr: base_value * 2',
        '  - name: base_value',
        '    expr: extract_conc + 1',
        '  - name: constant',
        '    expr: "3"',
      ].join('\n'),
    );
    const order = [...text.matchAll(/^ {2}\d+\. (\w+)/gm)].map((m) => m[1]);
    expect(order.indexOf('base_value')).toBeLessThan(order.indexOf('doubled'));
    expect(text).toContain("Written to the outputs in the method's order: doubled, base_value, constant");
    expect(text).toContain('reads nothing (a constant)');
    expect(text).toContain('reads formula column base_value\n');
  });

  it('says where data comes from when the method names no analytes and no partition coefficient', () => {
    const text = describeText(['name: bare', 'analytes:', '  Caffeine: {}', 'defaults:', '  reporting_limit: 0.5', 'formulas:', '  - { name: x, expr: extract_conc }'].join('\n'));
    expect(text).toContain('no partition coefficient: from the worklist, else the extraction is taken as complete (E = 100 %)');
    expect(text).toContain('Reporting limit where an analyte names none: 0.5 ng/mL');
    expect(text).toContain('blank: result below the reporting limit 0.5 ng/mL');
  });
});

describe("method check shows the mdl limits and the lab's own figures settings (issue 16)", () => {
  const text = describeText(
    [
      'name: figs',
      'sample_types:',
      '  MB: blank',
      '  BS: lcs',
      '  LLS: mdl',
      'analytes:',
      '  Atrazine: { spike_uncertainty_pct: 1.5, limits: { mdl: { recovery: [50, 150] } } }',
      '  Simazine: { expanded_uncertainty_pct: 18 }',
      '  Terbutryn-d5: { surrogate: true }',
      'limits:',
      '  mdl: { recovery: [40, 160] }',
      'reporting: { with_uncertainty: true }',
      'figures: { min_points_rw: 25, min_points_bias: 8 }',
      'formulas:',
      '  - { name: x, expr: extract_conc }',
    ].join('\n'),
  );

  it('lists mdl among the control types with its limits, analyte over method', () => {
    expect(text).toContain('control types shown: lcs, mdl (the types the lab codes name)');
    expect(limitsBlock(text, 'Atrazine')).toMatch(/mdl +recovery 50–150 % +\(recovery from analyte Atrazine mdl\)/);
    expect(limitsBlock(text, 'Simazine')).toMatch(/mdl +recovery 40–160 % +\(recovery from method mdl\)/);
  });

  it('shows the mdl type of a method that names no codes but sets mdl limits', () => {
    const t = describeText(['name: m', 'sample_types:', '  BS: lcs', 'limits:', '  mdl: { recovery: [40, 160] }', 'formulas:', '  - { name: x, expr: extract_conc }'].join('\n'));
    expect(t).toContain('control types shown: lcs, mdl (the types the lab codes name)');
  });

  it('gives the points the figures need, u(Cref) and any fixed U per analyte, and how results are reported', () => {
    const section = text.slice(text.indexOf("The lab's own figures"), text.indexOf('Formula columns'));
    expect(section).toContain('u(Rw) from 25 lcs recoveries at least (each qc level from as many of its own), the bias from 8 ms and msd recoveries at least');
    expect(section).toContain('detection limit (40 CFR 136 App. B Rev. 2): from 7 or more mdl rows (low-level spiked blanks) and 7 or more method blanks');
    expect(section).toContain('reported results: "x ± U" where a sample result carries an expanded uncertainty (reporting.with_uncertainty)');
    expect(section).toMatch(/Atrazine +u\(Cref\) 1\.5 % +U from the QC history/);
    expect(section).toMatch(/Simazine +u\(Cref\) 0 % \(no spike_uncertainty_pct\) +fixed U 18 % \(k = 2; expanded_uncertainty_pct\), over any history/);
    expect(section).not.toContain('Terbutryn-d5');
  });

  it('gives the defaults when the method says nothing (20 and 6 points, no "± U")', () => {
    const section = describeText('name: d\nformulas:\n  - { name: x, expr: extract_conc }\n');
    expect(section).toContain('u(Rw) from 20 lcs recoveries at least (each qc level from as many of its own), the bias from 6 ms and msd recoveries at least');
    expect(section).toContain('reported results: without their expanded uncertainty (reporting.with_uncertainty: false); the U has its own column');
    expect(section).toContain('the method names no analytes: u(Cref) 0 % and the U from the QC history for every analyte');
  });
});

describe('method check warns of controls the method cannot judge (issue 14, point 4)', () => {
  it.each([
    ['name: x\nsample_types:\n  MB: blank\nformulas:\n  - { name: y, expr: extract_conc }\n', ['blanks: no reporting limit anywhere']],
    ['name: x\ndefaults: { reporting_limit: 0.5 }\nsample_types:\n  MB: blank\nformulas:\n  - { name: y, expr: extract_conc }\n', []],
  ])('%#', (text, starts) => {
    const warnings = judgingWarnings(parseMethod(text, { file: 'm.yaml' }));
    expect(warnings.map((w) => w.slice(0, w.indexOf(' (') > 0 ? w.indexOf(' (') : undefined))).toEqual(starts);
  });
});
