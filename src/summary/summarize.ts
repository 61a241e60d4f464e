import { pushTo } from '../group.js';
import { compareLevels, SAMPLE_TYPES, type SampleType } from '../domain/fields.js';
import { FAILING_CODES, type Flag, type FlagCode } from '../issues.js';
import type { QcResult, QcStatus, RunRuleOutcome } from '../qc/assess.js';
import { mean, minMax, rsdPct, sampleSd } from '../qc/stats.js';
import { failedControls, headline, type FailedControl, type Headline } from './failures.js';

/** Recoveries of one row type (and, for qc rows, one level) within a batch and analyte. */
export interface RecoveryStats {
  type: SampleType;
  /** qc level (lower case) for qc rows, '' otherwise. */
  level: string;
  n: number;
  mean: number;
  /** Sample SD (n − 1); NaN for one value. */
  sd: number;
  rsdPct: number;
  min: number;
  max: number;
  /** Rows flagged REC_LOW or REC_HIGH. */
  outside: number;
}

/** Precision of the qc rows at one level: %CV of their pre-extraction concentrations (ICH M10). */
export interface PrecisionStats {
  level: string;
  n: number;
  meanConc: number;
  sdConc: number;
  cvPct: number;
}

export interface GroupSummary {
  batch: string;
  analyte: string;
  counts: Record<SampleType, number>;
  recoveries: RecoveryStats[];
  precision: PrecisionStats[];
  /** Largest RPD of the group; NaN when none. */
  maxRpd: number;
  /** Rows outside their limits: REC_LOW, REC_HIGH or RPD_HIGH. */
  outsideLimits: number;
  blankStatus: 'none' | 'clean' | 'hit';
  /** Mean theoretical extraction efficiency E (%) over the rows that computed. */
  meanEfficiencyPct: number;
  inputErrors: number;
  failedControls: number;
  /** Rows qualified by a surrogate of their sample outside its limits (SURROGATE_ASSOC). */
  surrogateQualified: number;
  runRule?: RunRuleOutcome;
  verdict: 'pass' | 'fail';
  /** Why the verdict is fail; empty when it passes. */
  reasons: string[];
  /** Findings that do not fail the verdict (e.g. qc rows the run rule tolerates). */
  notes: string[];
}

export interface BatchVerdict {
  batch: string;
  verdict: 'pass' | 'fail';
  reasons: string[];
  /** The sentence the batch's report leads with. */
  headline: Headline;
}

export interface Verdict {
  verdict: 'pass' | 'fail';
  reasons: string[];
  /** One verdict per batch (fail when any analyte of the batch fails). */
  batches: BatchVerdict[];
  /** Every control that failed, tolerated by the run rule or not, in worklist order. */
  failedControls: FailedControl[];
  /** The sentence every output leads with: all passed, accepted with failed QCs, no controls, or failed. */
  headline: Headline;
}

export interface SummaryInput {
  rowCount: number;
  sampleType: readonly (SampleType | '')[];
  texts: ReadonlyMap<string, readonly string[]>;
  computed: ReadonlyMap<string, Float64Array>;
  rowError: Uint8Array;
  flags: readonly Flag[];
  qc: QcResult;
}

/**
 * Per batch and analyte statistics and the verdict with its reasons (DESIGN.md §5–6).
 *
 * Verdict of a (batch, analyte): fail when any control failed, any row has an
 * input error, or the run rule rejects the run. Decision (ICH M10): where the run
 * rule applies, single qc rows outside their limits are judged by the rule as a
 * whole, so an accepted run passes with those rows listed in `notes`; their
 * qc_status is still fail and the CLI still exits 1 for them.
 */
export function summarize(input: SummaryInput): { groups: GroupSummary[]; overall: Verdict } {
  const n = input.rowCount;
  const text = (name: string) => input.texts.get(name) ?? new Array<string>(n).fill('');
  const batch = text('batch_id');
  const analyte = text('analyte');
  const level = text('qc_level');
  const sampleId = text('sample_id');
  const nan = new Float64Array(n).fill(NaN);
  const recovery = input.computed.get('spike_recovery_pct') ?? nan;
  const rpd = input.computed.get('rpd_pct') ?? nan;
  const eff = input.computed.get('extraction_efficiency_pct') ?? nan;
  const conc = input.computed.get('pre_extraction_conc') ?? nan;

  const rowsByGroup = new Map<string, number[]>();
  for (let r = 0; r < n; r++) pushTo(rowsByGroup, `${batch[r]}\u0000${analyte[r]}`, r);
  const codesByRow = new Map<number, Set<FlagCode>>();
  for (const f of input.flags) {
    const s = codesByRow.get(f.row) ?? new Set<FlagCode>();
    s.add(f.code);
    codesByRow.set(f.row, s);
  }
  const has = (r: number, code: FlagCode) => codesByRow.get(r)?.has(code) === true;
  const describe = (r: number) => `${input.sampleType[r] || 'row'} "${sampleId[r]}"`;
  const failingCodes = (r: number) => [...(codesByRow.get(r) ?? [])].filter((c) => FAILING_CODES.has(c));

  const groups: GroupSummary[] = [];
  const toleratedRows = new Set<number>();
  for (const rows of rowsByGroup.values()) {
    const b = batch[rows[0]!]!;
    const a = analyte[rows[0]!]!;
    const counts = Object.fromEntries(SAMPLE_TYPES.map((t) => [t, 0])) as Record<SampleType, number>;
    for (const r of rows) {
      const t = input.sampleType[r];
      if (t) counts[t]++;
    }

    const byType = new Map<string, number[]>();
    for (const r of rows) {
      const t = input.sampleType[r];
      if (!t || !Number.isFinite(recovery[r]!)) continue;
      pushTo(byType, `${t}\u0000${t === 'qc' ? level[r]!.toLowerCase() : ''}`, r);
    }
    const recoveries: RecoveryStats[] = [];
    for (const [k, rs] of byType) {
      const [type, lv] = k.split('\u0000') as [SampleType, string];
      const xs = rs.map((r) => recovery[r]!);
      const mm = minMax(xs);
      recoveries.push({
        type,
        level: lv,
        n: xs.length,
        mean: mean(xs),
        sd: sampleSd(xs),
        rsdPct: rsdPct(xs),
        min: mm.min,
        max: mm.max,
        outside: rs.filter((r) => has(r, 'REC_LOW') || has(r, 'REC_HIGH')).length,
      });
    }
    recoveries.sort(byTypeThenLevel);

    const byLevel = new Map<string, number[]>();
    for (const r of rows) {
      if (input.sampleType[r] !== 'qc' || input.rowError[r] || !Number.isFinite(conc[r]!)) continue;
      pushTo(byLevel, level[r]!.toLowerCase(), r);
    }
    const precision: PrecisionStats[] = [...byLevel]
      .map(([lv, rs]) => {
        const xs = rs.map((r) => conc[r]!);
        return { level: lv, n: xs.length, meanConc: mean(xs), sdConc: sampleSd(xs), cvPct: rsdPct(xs) };
      })
      .sort((x, y) => compareLevels(x.level, y.level));

    const rpds = rows.map((r) => rpd[r]!).filter(Number.isFinite);
    const blanks = rows.filter((r) => input.sampleType[r] === 'blank');
    const effs = rows.filter((r) => !input.rowError[r] && input.sampleType[r] !== 'calibrator').map((r) => eff[r]!);
    const rule = input.qc.runRule.find((o) => o.batch === b && o.analyte === a);

    // Reasons: failed controls by code, input errors, the run rule.
    const reasons: string[] = [];
    const notes: string[] = [];
    const failedRows = rows.filter((r) => input.qc.status[r] === 'fail' && !input.rowError[r]);
    const judgedByRunRule = (r: number) => rule !== undefined && input.sampleType[r] === 'qc';
    const byCode = new Map<FlagCode, number[]>();
    const tolerated: number[] = [];
    for (const r of failedRows) {
      if (judgedByRunRule(r)) {
        tolerated.push(r);
        continue;
      }
      for (const c of failingCodes(r)) pushTo(byCode, c, r);
    }
    for (const [code, rs] of byCode) reasons.push(`${code}: ${rs.map(describe).join(', ')}`);
    const errorRows = rows.filter((r) => input.rowError[r]);
    if (errorRows.length) reasons.push(`INPUT_ERROR: ${errorRows.map(describe).join(', ')}`);
    const outside = tolerated.map((r) => `${describe(r)} (${failingCodes(r).join(', ')})`).join(', ');
    if (rule && !rule.accepted) reasons.push(`run rule rejects the run: ${rule.reason}${outside ? `; failed: ${outside}` : ''}`);
    else if (rule && outside) notes.push(`run rule accepts the run with ${rule.passed} of ${rule.total} qc rows passing; failed: ${outside}`);
    if (rule?.accepted) for (const r of tolerated) toleratedRows.add(r);

    groups.push({
      batch: b,
      analyte: a,
      counts,
      recoveries,
      precision,
      maxRpd: minMax(rpds).max, // not Math.max(...rpds): one batch of a large worklist can hold more values than a call takes
      outsideLimits: rows.filter((r) => has(r, 'REC_LOW') || has(r, 'REC_HIGH') || has(r, 'RPD_HIGH')).length,
      blankStatus: blanks.length === 0 ? 'none' : blanks.some((r) => has(r, 'BLANK_HIT')) ? 'hit' : 'clean',
      meanEfficiencyPct: mean(effs),
      inputErrors: errorRows.length,
      failedControls: rows.filter((r) => input.qc.status[r] === 'fail').length,
      surrogateQualified: rows.filter((r) => has(r, 'SURROGATE_ASSOC')).length,
      runRule: rule,
      verdict: reasons.length ? 'fail' : 'pass',
      reasons,
      notes,
    });
  }

  const failed = failedControls({
    rowCount: n,
    sampleType: input.sampleType,
    texts: input.texts,
    flags: input.flags,
    status: input.qc.status,
    tolerated: (r) => toleratedRows.has(r),
  });
  // Counts per batch ('' for a worklist without batch ids) and over the whole worklist.
  const countsOf = new Map<string, { controls: number; failed: number; tolerated: number; inputErrors: number; surrogateSamples: number; istdSamples: number }>();
  const countFor = (b: string) => {
    let c = countsOf.get(b);
    if (!c) countsOf.set(b, (c = { controls: 0, failed: 0, tolerated: 0, inputErrors: 0, surrogateSamples: 0, istdSamples: 0 }));
    return c;
  };
  // Samples (batch and sample id) qualified by a surrogate, each counted once.
  const qualifiedSamples = new Set<string>();
  for (let r = 0; r < n; r++) {
    if (has(r, 'SURROGATE_ASSOC') && !qualifiedSamples.has(`${batch[r]}\u0000${sampleId[r]}`)) {
      qualifiedSamples.add(`${batch[r]}\u0000${sampleId[r]}`);
      countFor(batch[r]!).surrogateSamples++;
    }
  }
  for (let r = 0; r < n; r++) {
    const c = countFor(batch[r]!);
    if (input.qc.status[r] === '' && has(r, 'ISTD_RESPONSE')) c.istdSamples++;
    if (input.qc.status[r] !== '') c.controls++;
    if (input.rowError[r]) c.inputErrors++;
  }
  for (const f of failed) {
    const c = countFor(f.batch);
    c.failed++;
    if (f.tolerated) c.tolerated++;
  }
  const total = { controls: 0, failed: 0, tolerated: 0, inputErrors: 0, surrogateSamples: 0, istdSamples: 0 };
  for (const c of countsOf.values()) for (const k of Object.keys(total) as (keyof typeof total)[]) total[k] += c[k];

  const batches: BatchVerdict[] = [];
  const byBatch = new Map<string, GroupSummary[]>();
  for (const g of groups) {
    const list = byBatch.get(g.batch) ?? [];
    list.push(g);
    byBatch.set(g.batch, list);
  }
  for (const [b, gs] of byBatch) {
    const failedGroups = gs.filter((g) => g.verdict === 'fail');
    const verdict = failedGroups.length ? 'fail' : 'pass';
    batches.push({ batch: b, verdict, reasons: failedGroups.map((g) => `${analyteLabel(g.analyte)}: ${g.reasons.join('; ')}`), headline: headline(verdict, countFor(b)) });
  }
  const failedGroups = groups.filter((g) => g.verdict === 'fail');
  const verdict = failedGroups.length ? 'fail' : 'pass';
  const overall: Verdict = {
    verdict,
    reasons: failedGroups.map((g) => `${g.batch ? `batch ${g.batch}, ` : ''}${analyteLabel(g.analyte)}: ${g.reasons.join('; ')}`),
    batches,
    failedControls: failed,
    headline: headline(verdict, total),
  };
  return { groups, overall };
}

function analyteLabel(a: string): string {
  return a === '' ? '(no analyte)' : a;
}

function byTypeThenLevel(x: RecoveryStats, y: RecoveryStats): number {
  return SAMPLE_TYPES.indexOf(x.type) - SAMPLE_TYPES.indexOf(y.type) || compareLevels(x.level, y.level);
}

export type { QcStatus };
