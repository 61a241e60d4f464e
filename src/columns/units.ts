import { unit as mathUnit } from '../mathjs.js';

/**
 * A unit as labs type it, in the spelling mathjs reads: the micro sign (U+00B5) and the
 * Greek mu (U+03BC) become u, superscript ² and ³ become ^2 and ^3 (cm³ → cm^3), and
 * spaces go (ng / mL → ng/mL).
 */
export function normaliseUnitText(unit: string): string {
  return unit
    .trim()
    .replace(/[\u00b5\u03bc]/g, 'u')
    .replace(/\u00b2/g, '^2')
    .replace(/\u00b3/g, '^3')
    .replace(/\s+/g, '');
}

/**
 * Unit conversion done once per column, at the edge (LIBRARY-NOTES.md §1):
 * mathjs computes a numeric factor, values are then multiplied as plain numbers.
 *
 * Spellings mathjs lacks are mapped first: molar (M, nM, uM…) to mol/L forms,
 * mcg/mcL to ug/uL, and cc to cm^3 (mathjs has cc, kept for clarity).
 */
const MOLAR = /^([pnumk]?)M$/; // nM, uM, mM, pM, M

export function canonicalUnitText(text: string): string {
  let u = normaliseUnitText(text);
  u = u.replace(/mcg/g, 'ug').replace(/mcL/g, 'uL');
  const molar = MOLAR.exec(u);
  if (molar) u = `${molar[1]}mol/L`;
  return u;
}

export type UnitKind = 'volume' | 'mass_concentration' | 'molar_concentration';

/** What a unit text measures, or undefined when mathjs cannot read it as one of ours. */
export function unitKind(text: string): UnitKind | undefined {
  const u = canonicalUnitText(text);
  try {
    const parsed = mathUnit(1, u);
    if (parsed.equalBase(mathUnit(1, 'mL'))) return 'volume';
    if (parsed.equalBase(mathUnit(1, 'g/L'))) return 'mass_concentration';
    if (parsed.equalBase(mathUnit(1, 'mol/L'))) return 'molar_concentration';
  } catch {
    return undefined;
  }
  return undefined;
}

/**
 * Factor that converts a value in `from` into `to` (value_to = value_from × factor).
 * Throws a plain Error with a reason when the two do not measure the same thing;
 * the caller wraps it with the file and column.
 * For molar ↔ mass concentrations pass the molar mass in g/mol.
 */
export function conversionFactor(from: string, to: string, options: { molarMass?: number } = {}): number {
  const f = canonicalUnitText(from);
  const t = canonicalUnitText(to);
  if (f === t) return 1;
  const kf = unitKind(f);
  const kt = unitKind(t);
  if (!kf) throw new Error(`"${from}" is not a unit phasebook can convert`);
  if (!kt) throw new Error(`"${to}" is not a unit phasebook can convert`);
  // Factors are rounded to 15 significant digits: mathjs leaves binary noise (ng/mL → ug/L gives
  // 1.0000000000000002, cc → uL 999.9999999999999; LIBRARY-NOTES.md §1), and SI factors are exact decimals.
  if (kf === kt) return clean(mathUnit(1, f).toNumber(t));
  const molarMass = options.molarMass;
  if (kf === 'molar_concentration' && kt === 'mass_concentration') {
    if (!molarMass) throw new Error(`converting "${from}" to "${to}" needs the analyte's molar mass`);
    return clean(mathUnit(1, f).toNumber('mol/L') * mathUnit(1, 'g/L').toNumber(t)) * molarMass;
  }
  if (kf === 'mass_concentration' && kt === 'molar_concentration') {
    if (!molarMass) throw new Error(`converting "${from}" to "${to}" needs the analyte's molar mass`);
    return clean(mathUnit(1, f).toNumber('g/L') * mathUnit(1, 'mol/L').toNumber(t)) / molarMass;
  }
  throw new Error(`cannot convert "${from}" (${describeKind(kf)}) to "${to}" (${describeKind(kt)})`);
}

function describeKind(kind: UnitKind): string {
  return kind === 'volume' ? 'a volume' : kind === 'mass_concentration' ? 'a mass concentration' : 'a molar concentration';
}

/** Split `sample_volume [L]` into its name and unit text; no brackets → unit undefined. */
export function splitHeaderUnit(header: string): { name: string; unit?: string } {
  const m = /^(.*?)\s*[[(]\s*([^\])]+?)\s*[\])]\s*$/.exec(header);
  if (!m || m[1]!.trim() === '') return { name: header.trim() };
  return { name: m[1]!.trim(), unit: m[2]! };
}

function clean(factor: number): number {
  return Number(factor.toPrecision(15));
}
