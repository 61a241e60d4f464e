import { SAMPLE_TYPES, type SampleType } from '../columns/fields.js';
import { FAILING_CODES, type Flag } from '../issues.js';
import type { QcResult, QcStatus } from '../qc/assess.js';
import { mean, minMax, rsdPct, sampleSd } from '../qc/stats.js';

export interface RecoveryStats {
  type: SampleType;
  level: string;
  n: number;
  mean: number;
  sd: number;
  rsdPct: number;
  min: number;
  max: number;
  outside: number;
}

export interface GroupSummary {
  batch: string;
  analyte: string;
  counts: Record<SampleType, number>;
  recoveries: RecoveryStats[];
  maxRpd: number;
  blankStatus: 'none' | 'clean' | 'hit';
  meanEfficiencyPct: number;
  inputErrors: number;
  failedControls: number;
  verdict: 'pass' | 'fail';
  reasons: string[];
}

export interface Verdict {
  verdict: 'pass' | 'fail';
  reasons: string[];
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

/** Per batch and analyte statistics and the verdict with its reasons (DESIGN.md §5–6). */
export function summarize(input: SummaryInput): { groups: GroupSummary[]; overall: Verdict } {
  const n = input.rowCount;
  const batch = input.texts.get('batch_id')!;
  const analyte = input.texts.get('analyte')!;
  const level = input.texts.get('qc_level')!;
  const nan = new Float64Array(n).fill(NaN);
  const recovery = input.computed.get('spike_recovery_pct') ?? nan;
  const rpd = input.computed.get('rpd_pct') ?? nan;
  const eff = input.computed.get('extraction_efficiency_pct') ?? nan;

  const rowsByGroup = new Map<string, number[]>();
  for (let r = 0; r < n; r++) {
    const k = `${batch[r]}\u0000${analyte[r]}`;
    const g = rowsByGroup.get(k);
    if (g) g.push(r);
    else rowsByGroup.set(k, [r]);
  }
  const failingByRow = new Map<number, Flag[]>();
  const recFlagRows = new Set<number>();
  for (const f of input.flags) {
    if (f.code === 'REC_LOW' || f.code === 'REC_HIGH') recFlagRows.add(f.row);
    if (!FAILING_CODES.has(f.code)) continue;
    const list = failingByRow.get(f.row);
    if (list) list.push(f);
    else failingByRow.set(f.row, [f]);
  }

  const groups: GroupSummary[] = [];
  for (const rows of rowsByGroup.values()) {
    const b = batch[rows[0]!]!;
    const a = analyte[rows[0]!]!;
    const counts = Object.fromEntries(SAMPLE_TYPES.map((t) => [t, 0])) as Record<SampleType, number>;
    for (const r of rows) {
      const t = input.sampleType[r];
      if (t) counts[t]++;
    }
    const recoveries: RecoveryStats[] = [];
    const byType = new Map<string, number[]>();
    for (const r of rows) {
      const t = input.sampleType[r];
      if (!t || !Number.isFinite(recovery[r]!)) continue;
      const k = `${t}\u0000${t === 'qc' ? level[r]!.toLowerCase() : ''}`;
      const g = byType.get(k);
      if (g) g.push(r);
      else byType.set(k, [r]);
    }
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
        outside: rs.filter((r) => recFlagRows.has(r)).length,
      });
    }
    recoveries.sort((x, y) => SAMPLE_TYPES.indexOf(x.type) - SAMPLE_TYPES.indexOf(y.type) || x.level.localeCompare(y.level));
    const rpds = rows.map((r) => rpd[r]!).filter(Number.isFinite);
    const blanks = rows.filter((r) => input.sampleType[r] === 'blank');
    const hit = blanks.some((r) => failingByRow.get(r)?.some((f) => f.code === 'BLANK_HIT'));
    const effs = rows.filter((r) => !input.rowError[r]).map((r) => eff[r]!);

    const reasons: string[] = [];
    const failed = rows.filter((r) => input.qc.status[r] === 'fail');
    const byCode = new Map<string, string[]>();
    for (const r of failed) {
      const codes = failingByRow.get(r)?.map((f) => f.code) ?? (input.rowError[r] ? ['INPUT_ERROR'] : []);
      const id = input.texts.get('sample_id')![r]!;
      for (const c of new Set(codes)) {
        const list = byCode.get(c) ?? [];
        list.push(id);
        byCode.set(c, list);
      }
    }
    for (const [code, ids] of byCode) reasons.push(`${code}: ${ids.join(', ')}`);
    const inputErrors = rows.filter((r) => input.rowError[r]).length;
    const sampleErrors = rows.filter((r) => input.rowError[r] && input.sampleType[r] === 'sample').length;
    if (sampleErrors) reasons.push(`${sampleErrors} sample row${sampleErrors > 1 ? 's' : ''} with input errors`);
    const rule = input.qc.runRule.find((o) => o.batch === b && o.analyte === a);
    if (rule && !rule.accepted) reasons.push(`run rule rejects the run: ${rule.reason}`);

    groups.push({
      batch: b,
      analyte: a,
      counts,
      recoveries,
      maxRpd: rpds.length ? Math.max(...rpds) : NaN,
      blankStatus: blanks.length === 0 ? 'none' : hit ? 'hit' : 'clean',
      meanEfficiencyPct: mean(effs),
      inputErrors,
      failedControls: failed.length,
      verdict: reasons.length ? 'fail' : 'pass',
      reasons,
    });
  }
  const failedGroups = groups.filter((g) => g.verdict === 'fail');
  const overall: Verdict = {
    verdict: failedGroups.length ? 'fail' : 'pass',
    reasons: failedGroups.map((g) => `${g.batch ? `batch ${g.batch}, ` : ''}${g.analyte}: ${g.reasons.join('; ')}`),
  };
  return { groups, overall };
}

export type { QcStatus };
