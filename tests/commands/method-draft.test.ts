import { join } from 'node:path';
import { parse } from 'yaml';
import { describe, expect, it } from 'vitest';
import { CANONICAL_FIELDS } from '../../src/domain/fields.js';
import { mapColumns } from '../../src/columns/map.js';
import { compileMethod } from '../../src/engine/evaluate.js';
import { draftMethod, recogniseHeader } from '../../src/commands/method/draft.js';
import { loadMethod, parseMethod } from '../../src/method/load.js';
import { readWorklist } from '../../src/read/worklist.js';
import { rawTable } from '../helpers/raw-table.js';

const ROOT = join(import.meta.dirname, '../..');

/** Each shipped scenario method with its demo worklist. */
const DEMOS = [
  { method: 'surface-water.yaml', worklist: 'kestrel-brook-2026-11.csv', unplaced: [] as string[] },
  { method: 'plasma-amitriptyline.yaml', worklist: 'tarnmoor-tmr204-run07.csv', unplaced: ['Well', 'Inj Vol [µL]', 'Comment'] },
  { method: 'fruit-juice.yaml', worklist: 'elderwick-juice-s2611-3.csv', unplaced: ['Remark'] },
];

describe('method draft on the demo worklists', () => {
  it.each(DEMOS)('$worklist: places every header its shipped method maps, on the same field and unit', async ({ method, worklist, unplaced }) => {
    const raw = await readWorklist(join(ROOT, 'samples', worklist));
    const shipped = mapColumns(raw, loadMethod(join(ROOT, 'templates', method)));
    const draft = draftMethod(raw);
    const drafted = parseMethod(draft.text, { file: 'draft.yaml' });
    compileMethod(drafted); // the draft passes `method check`
    const mapped = mapColumns(raw, drafted);

    const summary = (m: typeof shipped) =>
      Object.fromEntries([...m.fields].map(([field, s]) => [field, { header: s.header, fromUnit: s.fromUnit }]));
    expect(summary(mapped)).toEqual(summary(shipped));
    expect(draft.placed.map((p) => p.header).sort()).toEqual([...shipped.fields.values()].map((s) => s.header).sort());
    expect(draft.unplaced.map((u) => u.header)).toEqual(unplaced);
    expect(mapped.unmapped.map((c) => raw.headers[c])).toEqual(unplaced);
    expect(draft.missing).toEqual([]);
  });

  it.each(DEMOS)('$worklist: guesses the sample-type codes as its shipped method maps them, and leaves the rest open', async ({ method, worklist }) => {
    const raw = await readWorklist(join(ROOT, 'samples', worklist));
    const shipped = loadMethod(join(ROOT, 'templates', method));
    const draft = draftMethod(raw);
    const drafted = parseMethod(draft.text, { file: 'draft.yaml' });
    expect(draft.sampleTypes.length).toBeGreaterThan(0);
    for (const c of draft.sampleTypes) {
      const want = shipped.sampleTypes.get(c.code.toLowerCase()) ?? c.code.toLowerCase();
      if (c.type) {
        expect(c.type, c.code).toBe(want);
        expect(drafted.sampleTypes.get(c.code.toLowerCase()) ?? c.code.toLowerCase()).toBe(want);
      } else {
        expect(draft.text).toContain(`# "${c.code}": ...`);
      }
    }
  });

  it('leaves an ambiguous code (FB: fortified or field blank) for the analyst', async () => {
    const raw = await readWorklist(join(ROOT, 'samples', 'elderwick-juice-s2611-3.csv'));
    const draft = draftMethod(raw);
    expect(draft.sampleTypes.find((c) => c.code === 'FB')).toEqual({ code: 'FB', ambiguous: 'a fortified blank (lcs) or a field blank (blank)' });
    expect(draft.text).toContain('# "FB": ...   # could be a fortified blank (lcs) or a field blank (blank): choose');
  });

  it.each(DEMOS)('$worklist: lists the analytes found and takes the units from the headers', async ({ method, worklist }) => {
    const raw = await readWorklist(join(ROOT, 'samples', worklist));
    const shipped = loadMethod(join(ROOT, 'templates', method));
    const draft = draftMethod(raw);
    expect(draft.analytes).toEqual(shipped.analytes.map((a) => a.name));
    expect(Object.keys((parse(draft.text) as { analytes: object }).analytes)).toEqual(draft.analytes);
    expect(draft.units).toEqual(shipped.units);
  });
});

describe('method draft on canonical headers', () => {
  it('places every canonical field by its canonical name', () => {
    const raw = rawTable([...CANONICAL_FIELDS], [CANONICAL_FIELDS.map(() => '')]);
    const draft = draftMethod(raw);
    expect(draft.placed.map((p) => [p.header, p.field, p.how])).toEqual(CANONICAL_FIELDS.map((f) => [f, f, 'canonical name']));
    expect(draft.unplaced).toEqual([]);
    expect(draft.units).toEqual({ volume: 'mL', concentration: 'ng/mL', extract_concentration: 'ng/mL' });
    const m = parseMethod(draft.text, { file: 'draft.yaml' });
    expect([...mapColumns(raw, m).fields.keys()]).toEqual([...CANONICAL_FIELDS]);
    // The formulas are those of the canonical method, as written there.
    const generic = loadMethod(join(ROOT, 'templates/generic-lle.yaml'));
    expect(m.formulas.map((f) => [f.name, f.expr])).toEqual(generic.formulas.map((f) => [f.name, f.expr]));
  });
});

describe('recogniseHeader', () => {
  it.each([
    ['Sample Vol (L)', 'sample_volume', 'L', 'known name'],
    ['sample_volume [µL]', 'sample_volume', 'uL', 'canonical name'],
    ['Sample ID', 'sample_id', undefined, 'canonical name'],
    ['Sample Name', 'sample_id', undefined, 'known name'],
    ['Sample (mL)', 'sample_volume', 'mL', 'word'], // a volume unit turns "Sample" into the sample volume
    ['DCM per Portion (mL)', 'solvent_volume', 'mL', 'word'],
    ['Portions', 'extractions', undefined, 'known name'],
    ['Hexane-IAA Vol [µL]', 'solvent_volume', 'uL', 'word'],
    ['Plasma Vol [µL]', 'sample_volume', 'uL', 'word'],
    ['Juice (mL)', 'sample_volume', 'mL', 'word'],
    ['Extract (µg/mL)', 'extract_conc', 'ug/mL', 'known name'],
    ['Extract Vol (mL)', 'final_volume', 'mL', 'known name'],
    ['Extract (mL)', 'final_volume', 'mL', 'word'], // the unit says it is a volume, not a result
    ['Final (mL)', 'final_volume', 'mL', 'word'],
    ['Final Volume', 'final_volume', undefined, 'canonical name'],
    ['Spike level (ng/mL)', 'spike_conc', 'ng/mL', 'known name'],
    ['Spiked amount (ug/L)', 'spike_conc', 'ug/L', 'word'],
    ['Level', 'qc_level', undefined, 'known name'],
    ['QC Level', 'qc_level', undefined, 'canonical name'],
    ['Dil', 'dilution', undefined, 'known name'],
    ['Dilution (x)', 'dilution', undefined, 'canonical name'],
    ['log K', 'log_k', undefined, 'canonical name'],
    ['Kd', 'partition_coeff', undefined, 'known name'],
    ['pKa', 'pka', undefined, 'canonical name'],
    ['Buffer pH', 'ph', undefined, 'word'],
    ['Run', 'batch_id', undefined, 'known name'],
    ['Parent Sample ID', 'parent_id', undefined, 'word'],
    ['Result (final)', 'extract_conc', undefined, 'word'], // brackets holding words are part of the name
    ['MRL (ug/L)', 'reporting_limit', 'ug/L', 'known name'],
  ])('%s → %s', (header, field, unit, how) => {
    const r = recogniseHeader(header);
    expect(r).toBeDefined();
    expect([r!.field, r!.unit, r!.how]).toEqual([field, unit, how]);
  });

  it.each(['Well', 'Inj Vol [µL]', 'Comment', 'Analyst', 'Injection Time'])('%s → not placed', (header) => {
    expect(recogniseHeader(header)).toBeUndefined();
  });

  it('keeps a header whose brackets hold words whole, as the alias mapColumns reads', () => {
    expect(recogniseHeader('Result (final)')?.alias).toBe('Result (final)');
    expect(recogniseHeader('Sample Vol (mL)')?.alias).toBe('Sample Vol');
  });
});

describe('method draft says what is left to do', () => {
  it('names the header already given and explains a clash with a canonical name', () => {
    const raw = rawTable(['Sample Name', 'Sample ID', 'Analyte', 'Result', 'Vol (mL)', 'Solvent (mL)'], [['a', 'b', 'x', '1', '1', '1']]);
    const draft = draftMethod(raw);
    expect(draft.placed.find((p) => p.field === 'sample_id')?.header).toBe('Sample ID'); // the canonical name wins
    expect(draft.unplaced).toEqual([
      { column: 0, header: 'Sample Name', reason: 'looks like sample_id, which column "Sample ID" already gives' },
    ]);
    expect(draft.text).toContain('#   "Sample Name": looks like sample_id, which column "Sample ID" already gives');
    const m = parseMethod(draft.text, { file: 'draft.yaml' });
    expect(mapColumns(raw, m).fields.get('sample_id')?.header).toBe('Sample ID');
  });

  it('lists required fields with no column, and still loads', () => {
    const raw = rawTable(['Sample', 'Compound', 'Result (ng/mL)', 'Comment'], [['a', 'x', '1', '']]);
    const draft = draftMethod(raw);
    expect(draft.missing).toEqual(['sample_volume', 'solvent_volume']);
    expect(draft.text).toContain('# Required fields with no column: sample_volume, solvent_volume.');
    expect(draft.text).toContain('  # sample_volume:');
    expect(draft.text).toContain('#   "Comment": no canonical field matches this header');
    expect(draft.text).toContain('# No sample-type column: every row is read as a sample.');
    compileMethod(parseMethod(draft.text, { file: 'draft.yaml' }));
  });

  it('notes a dimensioned column read without a unit, and a molar/mass mix that needs molar masses', () => {
    const raw = rawTable(
      ['Sample', 'Analyte', 'Conc (nmol/L)', 'Spike (ng/mL)', 'Sample Vol', 'Solvent Vol (mL)'],
      [['a', 'x', '1', '', '1', '1']],
    );
    const draft = draftMethod(raw);
    expect(draft.units).toEqual({ volume: 'mL', concentration: 'ng/mL', extract_concentration: 'nmol/L' });
    expect(draft.text).toContain('# One concentration is molar and the other by mass: give each analyte its molar_mass.');
    expect(draft.text).toMatch(/sample_volume: +\{ aliases: \["Sample Vol"\] \} +# "Sample Vol", by its known name; no unit in the header, read in mL: check/);
    compileMethod(parseMethod(draft.text, { file: 'draft.yaml' }));
  });

  it('quotes codes and analytes that YAML would otherwise misread, and names the method after the file', () => {
    const raw = rawTable(
      ['sample_id', 'sample_type', 'analyte', 'extract_conc', 'sample_volume', 'solvent_volume'],
      [
        ['a', 'yes', 'null', '1', '1', '1'],
        ['b', '#1', '2,4-D: acid', '1', '1', '1'],
        ['c', 'SAMP', 'NULL', '1', '1', '1'],
      ],
      { source: 'runs/my run #3.csv' },
    );
    const draft = draftMethod(raw);
    expect(draft.name).toBe('my-run-3');
    expect(draft.analytes).toEqual(['null', '2,4-D: acid']); // compared without case
    const m = parseMethod(draft.text, { file: 'draft.yaml' });
    expect(m.analytes.map((a) => a.name)).toEqual(['null', '2,4-D: acid']);
    expect(m.sampleTypes.get('samp')).toBe('sample');
    expect(draft.text).toContain('  # "yes": ...   # not recognised: choose one of sample, blank, lcs, lcsd, ms, msd, dup, qc');
    expect(draft.text).toContain('  # "#1": ...');
  });
});

const rawTableOf = (headers: string[]) => rawTable(headers, [headers.map(() => '1')], { source: 'lab-export.csv' });

describe('the draft never lets a field a header plausibly feeds default without saying so (issue 13)', () => {
  it('places "Reconst. (µL)" on final_volume', () => {
    expect(recogniseHeader('Reconst. (µL)')).toMatchObject({ field: 'final_volume', unit: 'uL' });
    expect(recogniseHeader('Reconstituted in (mL)')).toMatchObject({ field: 'final_volume', unit: 'mL' });
  });

  it('says which fields default, and names the unplaced header that may feed one', () => {
    const raw = rawTableOf(['Sample', 'Analyte', 'Extract Conc (ng/mL)', 'Plasma (µL)', 'Solvent (mL)', 'Taken into (µL)', 'Operator']);
    const d = draftMethod(raw);
    expect(d.defaulted).toEqual([
      { field: 'final_volume', fallback: 'extractions × solvent_volume (the whole extract, never concentrated or made up)', maybe: ['Taken into (µL)'] },
      { field: 'extractions', fallback: '1 extraction', maybe: [] },
      { field: 'dilution', fallback: 'no dilution (1)', maybe: [] },
    ]);
    expect(d.text).toContain('# final_volume:    no column: extractions × solvent_volume (the whole extract, never concentrated or made up); CHECK: "Taken into (µL)" may be it');
    expect(d.text).toContain('#   "Operator": no canonical field matches this header');
  });
});
