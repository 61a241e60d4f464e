import type { SampleType } from '../domain/fields.js';
import type { AnalyteInfo, ControlKind, LimitSet, Method, Range } from '../domain/method.js';

/**
 * In-house recovery control limits from the QC history, by analyte and control
 * type (key `inHouseKey(analyte, type)`): mean ± 3s once enough points exist
 * (US EPA SW-846 Method 8000 practice).
 */
export type InHouseLimits = ReadonlyMap<string, { low: number; high: number; n: number }>;

/** Per analyte, control type and QC level ('' for rows without a level): each level has limits of its own. */
export function inHouseKey(analyte: string, sampleType: string, level = ''): string {
  return `${analyte.trim().toLowerCase()}\u0000${sampleType}\u0000${level.trim().toLowerCase()}`;
}

export interface AppliedLimits {
  recovery?: Range;
  rpdMax?: number;
  /** Blanks: the part of the reporting limit they must stay below (1 when the method says nothing). */
  blankFraction?: number;
  /** Which entry of the method supplied them, in words (for the QC sheet). */
  origin: string;
}

/**
 * Limits for one row, most specific first: the analyte's own limits for the type
 * and qc level, then the analyte's for the type, then the method's (which carry
 * the generic defaults of DESIGN.md §5 underneath).
 * A surrogate analyte's recovery is judged against the surrogate limits whatever the row type.
 */
export function limitsFor(
  method: Method,
  row: { analyte?: AnalyteInfo; analyteName?: string; sampleType: SampleType; qcLevel: string },
  inHouse?: InHouseLimits,
): AppliedLimits {
  const kind: ControlKind | undefined = row.analyte?.surrogate
    ? 'surrogate'
    : row.sampleType === 'sample' || row.sampleType === 'calibrator'
      ? undefined
      : row.sampleType;
  if (!kind) return { origin: 'none' };
  const level = row.qcLevel.trim().toLowerCase();
  const candidates: Array<[LimitSet | undefined, string]> = [];
  const push = (set: LimitSet | undefined, where: string) => {
    if (!set) return;
    if (level && set.levels) {
      const lv = Object.entries(set.levels).find(([k]) => k.toLowerCase() === level)?.[1];
      candidates.push([lv, `${where} ${kind} at level ${level}`]);
    }
    candidates.push([set, `${where} ${kind}`]);
  };
  push(row.analyte?.limits[kind], `analyte ${row.analyte?.name}`);
  push(method.limits[kind], 'method');
  const out: AppliedLimits = { origin: '' };
  const origins: string[] = [];
  for (const [set, where] of candidates) {
    if (!set) continue;
    if (!out.recovery && set.recovery) {
      out.recovery = set.recovery;
      origins.push(`recovery from ${where}`);
    }
    if (out.rpdMax === undefined && set.rpd_max !== undefined && kind !== 'surrogate') {
      out.rpdMax = set.rpd_max;
      origins.push(`RPD from ${where}`);
    }
    if (out.blankFraction === undefined && set.max_fraction_of_rl !== undefined && kind === 'blank') {
      out.blankFraction = set.max_fraction_of_rl;
      origins.push(`blank limit from ${where}`);
    }
  }
  // A method that asks for in-house limits gets them where the history holds enough points.
  const name = row.analyte?.name ?? row.analyteName;
  if (method.qc.limitsSource === 'in_house' && inHouse && name !== undefined && out.recovery) {
    const own = inHouse.get(inHouseKey(name, row.sampleType, row.qcLevel));
    if (own) {
      out.recovery = [own.low, own.high];
      const level = row.qcLevel.trim() ? ` ${row.qcLevel.trim().toLowerCase()}` : '';
      origins[0] = `recovery from in-house control limits (mean ± 3s of ${own.n} ${row.sampleType}${level} points in the QC history)`;
    }
  }
  out.origin = origins.join('; ') || 'none';
  return out;
}

export function formatRange(r: Range): string {
  return `${r[0]}–${r[1]} %`;
}
