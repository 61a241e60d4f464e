/**
 * Every control that failed, named, and the one sentence each output leads with
 * (issue 14: never say "all passed" when something failed). The terminal, the
 * workbook's Summary sheet and the report all take their words from here, so they
 * cannot disagree, and a run the run rule accepts with failed qc rows is said to be
 * exactly that.
 */
import type { SampleType } from '../domain/fields.js';
import { FAILING_CODES, type Flag } from '../issues.js';
import type { QcStatus } from '../qc/assess.js';

export interface FailedControl {
  /** 0-based data row. */
  row: number;
  sampleId: string;
  batch: string;
  analyte: string;
  type: SampleType | '';
  /** qc level for qc rows, else ''. */
  level: string;
  /** The findings that failed it (REC_LOW, BLANK_HIT, …, or INPUT_ERROR when it could not be judged), as flags. */
  findings: Flag[];
  /** A qc row the run rule judged, in a run the rule accepted: failed, but it does not fail the verdict. */
  tolerated: boolean;
}

export interface FailureInput {
  rowCount: number;
  sampleType: readonly (SampleType | '')[];
  texts: ReadonlyMap<string, readonly string[]>;
  /** Sorted by row. */
  flags: readonly Flag[];
  status: readonly QcStatus[];
  /** Whether the run rule judged this row and accepted its run. */
  tolerated: (row: number) => boolean;
}

/** The failed controls in worklist order. Linear: one pass over the flags, one over the rows. */
export function failedControls(input: FailureInput): FailedControl[] {
  const n = input.rowCount;
  const text = (name: string) => input.texts.get(name) ?? new Array<string>(n).fill('');
  const [sampleId, batch, analyte, level] = ['sample_id', 'batch_id', 'analyte', 'qc_level'].map(text) as [readonly string[], readonly string[], readonly string[], readonly string[]];
  const failing = new Map<number, Flag[]>();
  for (const f of input.flags) {
    if (input.status[f.row] !== 'fail') continue;
    if (!FAILING_CODES.has(f.code) && f.code !== 'INPUT_ERROR') continue;
    const list = failing.get(f.row);
    if (list) list.push(f);
    else failing.set(f.row, [f]);
  }
  const out: FailedControl[] = [];
  for (let r = 0; r < n; r++) {
    if (input.status[r] !== 'fail') continue;
    const type = input.sampleType[r] ?? '';
    out.push({
      row: r,
      sampleId: sampleId[r] ?? '',
      batch: batch[r] ?? '',
      analyte: analyte[r] ?? '',
      type,
      level: type === 'qc' ? (level[r] ?? '') : '',
      findings: failing.get(r) ?? [],
      tolerated: input.tolerated(r),
    });
  }
  return out;
}

/** One failed control in a line: who, then each finding's own located words. */
export function describeFailedControl(c: FailedControl): string {
  const kind = c.type === '' ? 'row of unknown type' : c.type === 'qc' && c.level ? `qc ${c.level}` : c.type;
  const who = `${kind} "${c.sampleId}", ${c.analyte || '(no analyte)'}${c.batch ? `, batch ${c.batch}` : ''}`;
  const why = c.findings.length ? c.findings.map((f) => `${f.code}: ${f.message}`).join('; ') : 'failed';
  return `${who}${c.tolerated ? ' (tolerated by the run rule)' : ''}: ${why}`;
}

export type HeadlineKind = 'all-passed' | 'accepted-with-failures' | 'no-controls' | 'failed';

export interface Headline {
  kind: HeadlineKind;
  /** The verdict as a word: PASS or FAIL (the run rule's acceptance is a PASS). */
  label: 'PASS' | 'FAIL';
  /** The sentence that says why, true in every case. */
  sentence: string;
}

/**
 * The verdict's sentence. `failed` counts every failed control, tolerated ones included;
 * `controls` the control rows judged; `inputErrors` the rows with an input error.
 */
export function headline(
  verdict: 'pass' | 'fail',
  counts: { controls: number; failed: number; tolerated: number; inputErrors: number; surrogateSamples?: number; istdSamples?: number },
): Headline {
  const h = headlineOf(verdict, counts);
  // A surrogate outside its limits qualifies its sample without failing anything: still said, never hidden behind "passed".
  // So does a sample row whose internal-standard response is outside the window.
  const s = counts.surrogateSamples ?? 0;
  const i = counts.istdSamples ?? 0;
  let sentence = h.sentence;
  if (s > 0) sentence += `; ${s.toLocaleString('en-US')} sample${s === 1 ? ' is' : 's are'} qualified by a surrogate outside its limits`;
  if (i > 0) sentence += `; ${i.toLocaleString('en-US')} sample result${i === 1 ? ' has' : 's have'} an internal-standard response outside its window`;
  return sentence === h.sentence ? h : { ...h, sentence };
}

function headlineOf(verdict: 'pass' | 'fail', counts: { controls: number; failed: number; tolerated: number; inputErrors: number }): Headline {
  const { controls, failed, tolerated, inputErrors } = counts;
  const plural = (k: number, one: string, many: string) => `${k.toLocaleString('en-US')} ${k === 1 ? one : many}`;
  if (verdict === 'fail') {
    const parts: string[] = [];
    if (failed > 0) parts.push(`${plural(failed, 'control', 'controls')} failed`);
    if (inputErrors > 0) parts.push(`${plural(inputErrors, 'row has', 'rows have')} an input error`);
    const sentence = parts.length ? parts.join(' and ') : 'the run rule rejects the run';
    return { kind: 'failed', label: 'FAIL', sentence };
  }
  if (failed > 0) {
    // Only qc rows the run rule judged can fail without failing the verdict.
    return {
      kind: 'accepted-with-failures',
      label: 'PASS',
      sentence: `run accepted with failed QCs: the run rule accepts the run, but ${plural(Math.max(failed, tolerated), 'qc row', 'qc rows')} failed`,
    };
  }
  if (controls === 0) {
    return { kind: 'no-controls', label: 'PASS', sentence: 'no control row was judged: the worklist has none, so nothing here checks the extraction' };
  }
  return { kind: 'all-passed', label: 'PASS', sentence: 'every control passed and no row has an input error' };
}
