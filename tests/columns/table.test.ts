import { describe, expect, it } from 'vitest';
import { mapColumns } from '../../src/columns/map.js';
import { buildTable } from '../../src/columns/table.js';
import { StopError } from '../../src/errors.js';
import { loadMethod, parseMethod } from '../../src/method/load.js';
import { rawTable } from '../helpers/raw-table.js';

const generic = loadMethod('templates/generic-lle.yaml');
const BASE = ['sample_id', 'analyte', 'extract_conc', 'sample_volume', 'solvent_volume'];

function build(headers: string[], rows: (string | number | null)[][], method = generic, decimalComma = false) {
  const raw = rawTable(headers, rows, { decimalComma });
  return buildTable(raw, mapColumns(raw, method), method);
}

describe('column mapping', () => {
  it('stops on a missing required column, naming it', () => {
    const raw = rawTable(['sample_id', 'analyte', 'extract_conc', 'sample_volume'], []);
    expect(() => mapColumns(raw, generic)).toThrow('missing the required column "solvent_volume"');
  });

  it('stops when two columns give one field', () => {
    const raw = rawTable([...BASE, 'Sample Volume [L]'], []);
    let err: unknown;
    try {
      mapColumns(raw, generic);
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(StopError);
    expect((err as StopError).describe()).toBe(
      'test.csv, row 1, column "Sample Volume [L]": the field sample_volume is given twice, in columns "sample_volume" and "Sample Volume [L]"; expected one column per field',
    );
  });

  it('names the row the header is on when blank rows come first', () => {
    const raw = { ...rawTable(['sample_id', 'analyte', 'extract_conc', 'sample_volume'], []), headerRow: 3 };
    let err: unknown;
    try {
      mapColumns(raw, generic);
    } catch (e) {
      err = e;
    }
    expect((err as StopError).describe()).toBe('test.csv, row 3: missing the required column "solvent_volume"');
  });

  it('stops on a unit it cannot convert, naming the column', () => {
    const raw = rawTable(['sample_id', 'analyte', 'extract_conc [furlongs]', 'sample_volume', 'solvent_volume'], []);
    expect(() => mapColumns(raw, generic)).toThrow(/^cannot read "furlongs" as a unit; expected a concentration unit such as ng\/mL, ug\/L or nmol\/L$/);
    const raw2 = rawTable(['sample_id', 'analyte', 'extract_conc', 'sample_volume [ng/mL]', 'solvent_volume'], []);
    expect(() => mapColumns(raw2, generic)).toThrow(/^cannot convert "ng\/mL" \(a mass concentration\) to "mL" \(a volume\); expected a volume unit such as mL, uL or L$/);
  });

  it('keeps headers it does not know as extra columns', () => {
    const raw = rawTable([...BASE, 'Analyst note'], []);
    expect(mapColumns(raw, generic).unmapped).toEqual([5]);
  });

  it('converts units once per column: L and µL to mL, µg/mL to ng/mL', () => {
    const t = build(['sample_id', 'analyte', 'extract_conc [ug/mL]', 'sample_volume [L]', 'solvent_volume [µL]'], [['a', 'x', '0.5', '0.25', '500']]);
    expect(t.numbers.get('extract_conc')![0]).toBeCloseTo(500, 12);
    expect(t.numbers.get('sample_volume')![0]).toBeCloseTo(250, 12);
    expect(t.numbers.get('solvent_volume')![0]).toBeCloseTo(0.5, 12);
  });
});

describe('row validation (DESIGN.md §7): the row stays, marked INPUT_ERROR with the reason', () => {
  it.each([
    ['sample_volume', '0', 'row 2, column "sample_volume": expected a volume above 0, got "0"'],
    ['sample_volume', '-5', 'row 2, column "sample_volume": expected a volume above 0, got "-5"'],
    ['solvent_volume', 'ten', 'row 2, column "solvent_volume": expected a number, got "ten"'],
    ['extractions', '2.5', 'row 2, column "extractions": expected a whole number of extractions, 1 or more, got "2.5"'],
    ['extractions', '0', 'row 2, column "extractions": expected a whole number of extractions, 1 or more, got "0"'],
    ['dilution', '0.5', 'row 2, column "dilution": expected a dilution factor of 1 or more, got "0.5"'],
    ['partition_coeff', '0', 'row 2, column "partition_coeff": expected a partition coefficient above 0, got "0"'],
    ['ph', '14.5', 'row 2, column "ph": expected a pH from 0 to 14, got "14.5"'],
    ['extract_conc', 'Infinity', 'row 2, column "extract_conc": expected a finite number, got "Infinity"'],
    ['extract_conc', '', 'row 2, column "extract_conc": expected a value for extract_conc, got an empty cell'],
    ['sample_type', 'spike', 'row 2, column "sample_type": expected a sample type (sample, blank, lcs, lcsd, ms, msd, dup, qc, mdl, calibrator), got "spike"'],
    ['acid_base', 'salt', 'row 2, column "acid_base": expected acid, base or neutral, got "salt"'],
  ])('%s = %j', (column, value, message) => {
    const headers = [...BASE, 'sample_type', 'extractions', 'dilution', 'partition_coeff', 'ph', 'acid_base'];
    const row: (string | null)[] = ['s1', 'x', '1', '100', '10', 'sample', '1', '1', '5', '7', ''];
    row[headers.indexOf(column)] = value;
    const t = build(headers, [row, ['s2', 'x', '1', '100', '10', 'sample', '1', '1', '5', '7', '']]);
    expect(t.errors.map((e) => e.message)).toEqual([message]);
    expect([...t.rowError]).toEqual([1, 0]);
  });

  it("a reader's row problem (short or long row) is kept as the reader worded it, not prefixed twice", () => {
    const raw = rawTable(BASE, [['s1', 'x', '1', '100', '10'], ['s2', 'x', null, null, null]]);
    raw.rowProblems.push({ row: 1, message: 'row 3: expected 5 cells, got 2' });
    const t = buildTable(raw, mapColumns(raw, generic), generic);
    expect(t.errors.map((e) => [e.row, e.code, e.message])).toEqual([[1, 'INPUT_ERROR', 'row 3: expected 5 cells, got 2']]);
    expect([...t.rowError]).toEqual([0, 1]);
  });

  it('a slightly negative extract concentration is a real result, not an error', () => {
    const t = build(BASE, [['s1', 'x', '-0.003', '100', '10']]);
    expect(t.errors).toEqual([]);
    expect(t.numbers.get('extract_conc')![0]).toBe(-0.003);
  });

  it('an ionisable analyte needs a pH', () => {
    const t = build([...BASE, 'partition_coeff', 'pka', 'acid_base'], [['s1', 'x', '1', '100', '10', '5', '4.2', 'acid']]);
    expect(t.errors[0]!.message).toBe('row 2, column "ph": expected a pH for an ionisable analyte (acid)');
  });

  it('decimal commas in a semicolon file', () => {
    const t = build(BASE, [['s1', 'x', '1,25', '100', '12,5']], generic, true);
    expect(t.numbers.get('extract_conc')![0]).toBe(1.25);
    expect(t.numbers.get('solvent_volume')![0]).toBe(12.5);
  });
});

describe('defaults (DESIGN.md §4)', () => {
  it('extractions 1, dilution 1, final volume n × V_org, K from log K, sample type sample', () => {
    const t = build([...BASE, 'extractions', 'log_k'], [['s1', 'x', '1', '100', '10', '3', '2']]);
    expect(t.numbers.get('dilution')![0]).toBe(1);
    expect(t.numbers.get('final_volume')![0]).toBe(30);
    expect(t.numbers.get('partition_coeff')![0]).toBeCloseTo(100, 10);
    expect(t.sampleType[0]).toBe('sample');
  });

  it('analyte data and lab codes come from the method; a worklist cell overrides them', () => {
    const method = parseMethod(
      [
        'name: t',
        'sample_types: { MB: blank }',
        'analytes:',
        '  Caffeine: { aliases: [CAF], partition_coeff: 4.5, reporting_limit: 0.2 }',
        'formulas: [{ name: y, expr: "1" }]',
      ].join('\n'),
      { file: 't.yaml' },
    );
    const t = build([...BASE, 'sample_type', 'partition_coeff'], [
      ['s1', 'caf', '1', '100', '10', 'mb', ''],
      ['s2', 'Caffeine', '1', '100', '10', '', '9'],
    ], method);
    expect(t.sampleType).toEqual(['blank', 'sample']);
    expect(t.texts.get('analyte')).toEqual(['Caffeine', 'Caffeine']);
    expect([...t.numbers.get('partition_coeff')!]).toEqual([4.5, 9]);
    expect([...t.numbers.get('reporting_limit')!]).toEqual([0.2, 0.2]);
  });

  it('a missing K is not an error but leaves a note that E is taken as 100 %', () => {
    const t = build(BASE, [['s1', 'x', '1', '100', '10']]);
    expect(t.errors).toEqual([]);
    expect(t.notes.map((n) => n.message)).toEqual(['no partition coefficient: extraction efficiency taken as 100 %']);
  });
});
