import { createHash } from 'node:crypto';
import { readFileSync, statSync } from 'node:fs';
import { formatBytes } from '../format.js';
import { resolveMethod } from './find.js';
import { normaliseUnitText, unitKind } from '../columns/units.js';
import { LineCounter, parseDocument, isNode, isScalar, visit, type Document } from 'yaml';
import { StopError, fsReason } from '../errors.js';
import { parseAcidBase } from '../chemistry/partition.js';
import { FIELD_SPECS, isCanonicalField, type CanonicalField, type Dimension, type SampleType } from '../domain/fields.js';
import { DEFAULT_MIN_BIAS, DEFAULT_MIN_RW, GENERIC_INTERNAL_STANDARD, GENERIC_LIMITS, GENERIC_QC, GENERIC_REPORTING } from './defaults.js';
import { methodSchemaValidator } from './schema-validator.js';
import type { AnalyteInfo, FieldConfig, FormulaDef, LimitTable, Method, Range, Rounding } from '../domain/method.js';

/** Significance levels of the Dixon's Q table phasebook carries (Rorabacher, Anal. Chem. 1991). */
const DIXON_ALPHAS = [0.1, 0.05, 0.04, 0.02, 0.01];

/** The longest method text read, in characters (a method is a few kilobytes; 1 MiB is far beyond any real one). */
export const MAX_METHOD_CHARS = 1024 * 1024;

/**
 * A key given twice in one mapping is a located error (the later one's line), found
 * in one pass over each mapping. Keys compare as YAML scalars (1 and "1" differ);
 * merge keys (<<) may repeat.
 */
function refuseDuplicateKeys(doc: Document, where: { file: string; lineCounter: LineCounter }): void {
  visit(doc, {
    Map(_key, map) {
      const seen = new Map<string, number>();
      for (const pair of map.items) {
        if (!isScalar(pair.key) || pair.key.value === '<<') continue;
        const id = `${typeof pair.key.value}:${String(pair.key.value)}`;
        const line = where.lineCounter.linePos(pair.key.range?.[0] ?? 0).line;
        const first = seen.get(id);
        if (first !== undefined) {
          throw new StopError('method', `cannot read the method as YAML: the key "${String(pair.key.value)}" is given twice (first at line ${first})`, {
            file: where.file,
            line,
          });
        }
        seen.set(id, line);
      }
    },
  });
}

/**
 * Read a method file, or a method by name (method/find.ts: PHASEBOOK_METHODS, then the
 * shipped ones); throws a StopError('method') naming file, line and key.
 */
export function loadMethod(pathOrName: string): Method {
  const path = resolveMethod(pathOrName);
  let text: string;
  try {
    // A UTF-8 character is at most 4 bytes: a larger file cannot be a method, and is not read.
    const bytes = statSync(path).size;
    if (bytes > 4 * MAX_METHOD_CHARS) {
      throw new StopError('method', `is ${formatBytes(bytes)}, larger than a method file may be (${MAX_METHOD_CHARS.toLocaleString('en-US')} characters)`, { file: path });
    }
    text = readFileSync(path, 'utf8');
  } catch (err) {
    if (err instanceof StopError) throw err;
    throw new StopError('method', `cannot read the method file: ${fsReason(err)}`, { file: path });
  }
  return parseMethod(text, { file: path });
}

/** Parse method text (YAML); `file` is used in messages and provenance. */
export function parseMethod(text: string, options: { file: string }): Method {
  const file = options.file;
  const lineCounter = new LineCounter();
  if (text.length > MAX_METHOD_CHARS) {
    throw new StopError('method', `is ${text.length.toLocaleString('en-US')} characters long, more than the ${MAX_METHOD_CHARS.toLocaleString('en-US')} a method file may hold`, { file });
  }
  // Keys are checked for uniqueness below, in one pass: the YAML library's own check compares
  // every key with every other (40,000 sample-type codes took over 20 s).
  const doc = parseDocument(text, { lineCounter, prettyErrors: false, uniqueKeys: false });
  if (doc.errors.length > 0) {
    const e = doc.errors[0]!;
    const line = e.linePos?.[0]?.line ?? lineCounter.linePos(e.pos[0]).line;
    throw new StopError('method', `cannot read the method as YAML: ${firstLine(e.message)}`, { file, line });
  }
  try {
    refuseDuplicateKeys(doc, { file, lineCounter });
  } catch (err) {
    if (err instanceof RangeError) throw new StopError('method', `cannot read the method as YAML: ${firstLine(err.message)}`, { file, line: 1 });
    throw err;
  }
  let data: unknown;
  try {
    data = doc.toJS({ maxAliasCount: 50 }) as unknown;
  } catch (err) {
    // e.g. an alias bomb ("billion laughs"): too many aliases to expand.
    throw new StopError('method', `cannot read the method as YAML: ${firstLine((err as Error).message)}`, { file, line: 1 });
  }
  if (data === null || typeof data !== 'object' || Array.isArray(data)) {
    throw new StopError('method', 'expected a method (a YAML mapping with name and formulas), got nothing usable', { file, line: 1 });
  }
  const validate = methodSchemaValidator();
  if (!validate(data)) {
    const err = validate.errors![0]!;
    const path = pointerToPath(err.instancePath);
    let key = keyPath(path);
    let message = err.message ?? 'is not valid';
    const badName = (err as { propertyName?: string }).propertyName;
    if (badName !== undefined) {
      path.push(badName);
      key = keyPath(path);
      message = path[0] === 'fields' ? `"${badName}" is not a canonical field` : `"${badName}" is not an accepted key here`;
    } else if (err.keyword === 'additionalProperties') {
      const extra = (err.params as { additionalProperty: string }).additionalProperty;
      path.push(extra);
      key = keyPath(path);
      message = `unknown key "${extra}"`;
    } else if (err.keyword === 'required') {
      const missing = (err.params as { missingProperty: string }).missingProperty;
      message = `missing required key "${missing}"`;
    } else if (err.keyword === 'enum') {
      const allowed = (err.params as { allowedValues: unknown[] }).allowedValues;
      message = `expected one of ${allowed.map((a) => JSON.stringify(a)).join(', ')}, got ${JSON.stringify(valueAt(data, path))}`;
    } else if (err.keyword === 'propertyNames') {
      const name = (err.params as { propertyName: string }).propertyName;
      path.push(name);
      key = keyPath(path);
      message = `"${name}" is not a canonical field`;
    } else {
      message = `${message}, got ${JSON.stringify(valueAt(data, path))}`;
    }
    throw new StopError('method', message, { file, line: lineOf(doc, lineCounter, path), column: key || '(top)' });
  }
  const raw = data as RawMethod;
  const at = (path: (string | number)[]) => ({ file, line: lineOf(doc, lineCounter, path), column: keyPath(path) });

  const fields = new Map<CanonicalField, FieldConfig>();
  for (const [name, cfg] of Object.entries(raw.fields ?? {})) {
    if (!isCanonicalField(name)) throw new StopError('method', `"${name}" is not a canonical field`, at(['fields', name]));
    fields.set(name, { aliases: cfg.aliases ?? [], unit: cfg.unit, default: cfg.default });
  }

  const sampleTypes = new Map<string, SampleType>();
  const sampleTypeLevels = new Map<string, string>();
  for (const [code, value] of Object.entries(raw.sample_types ?? {})) {
    const key = code.trim().toLowerCase();
    if (typeof value === 'string') {
      sampleTypes.set(key, value);
    } else {
      sampleTypes.set(key, value.type);
      if (value.level !== undefined) {
        if (value.type !== 'qc') throw new StopError('method', `a QC level goes with the type qc, got the type ${value.type}`, at(['sample_types', code, 'level']));
        sampleTypeLevels.set(key, value.level.trim().toLowerCase());
      }
    }
  }

  const analytes: AnalyteInfo[] = Object.entries(raw.analytes ?? {}).map(([name, a]) => ({
    name,
    aliases: a.aliases ?? [],
    partition_coeff: a.partition_coeff ?? (a.log_k !== undefined ? 10 ** a.log_k : undefined),
    log_k: a.log_k,
    pka: a.pka,
    acid_base: a.acid_base ? parseAcidBase(a.acid_base) : undefined,
    ph: a.ph,
    reporting_limit: a.reporting_limit,
    calibration_range: a.calibration_range as [number, number] | undefined,
    molar_mass: a.molar_mass,
    surrogate: a.surrogate ?? false,
    limits: (a.limits ?? {}) as LimitTable,
    spike_uncertainty_pct: a.spike_uncertainty_pct,
    expanded_uncertainty_pct: a.expanded_uncertainty_pct,
  }));
  for (const a of analytes) {
    if ((a.acid_base === 'acid' || a.acid_base === 'base') && a.pka === undefined) {
      throw new StopError('method', `analyte "${a.name}" is marked ${a.acid_base} but has no pka`, at(['analytes', a.name, 'acid_base']));
    }
    if (a.calibration_range && a.calibration_range[0] > a.calibration_range[1]) {
      throw new StopError('method', `expected calibration_range as [low, high], got [${a.calibration_range.join(', ')}]`, at(['analytes', a.name, 'calibration_range']));
    }
  }

  const units = {
    volume: normaliseUnitText(raw.units?.volume ?? 'mL'),
    concentration: normaliseUnitText(raw.units?.concentration ?? 'ng/mL'),
    extract_concentration: normaliseUnitText(raw.units?.extract_concentration ?? raw.units?.concentration ?? 'ng/mL'),
  };
  // Every unit the method names must be a unit of its kind (a "furlong" concentration must not reach a header).
  const wanted = (dimension: Dimension) =>
    dimension === 'volume' ? { kinds: ['volume'], words: 'a volume unit such as mL, uL or L' } : { kinds: ['mass_concentration', 'molar_concentration'], words: 'a concentration unit such as ng/mL, ug/L or nmol/L' };
  const checkUnit = (text: string | undefined, dimension: Dimension, path: (string | number)[]) => {
    if (text === undefined || dimension === 'none') return;
    const kind = unitKind(text);
    const want = wanted(dimension);
    if (!kind || !want.kinds.includes(kind)) {
      throw new StopError('method', `${kind ? `"${text}" is not a unit of this kind` : `cannot read "${text}" as a unit`}; expected ${want.words}`, at(path));
    }
  };
  checkUnit(raw.units?.volume, 'volume', ['units', 'volume']);
  checkUnit(raw.units?.concentration, 'concentration', ['units', 'concentration']);
  checkUnit(raw.units?.extract_concentration, 'extract_concentration', ['units', 'extract_concentration']);
  for (const [name, cfg] of fields) {
    const dimension = FIELD_SPECS.get(name)?.dimension ?? 'none';
    if (cfg.unit !== undefined && dimension === 'none') throw new StopError('method', `${name} has no unit; expected no unit key here`, at(['fields', name, 'unit']));
    checkUnit(cfg.unit, dimension, ['fields', name, 'unit']);
  }

  const seen = new Set<string>();
  const formulas: FormulaDef[] = raw.formulas.map((f, i) => {
    if (isCanonicalField(f.name)) {
      throw new StopError('method', `formula column "${f.name}" has the name of an input field; choose another name`, at(['formulas', i, 'name']));
    }
    if (seen.has(f.name)) throw new StopError('method', `formula column "${f.name}" is defined twice`, at(['formulas', i, 'name']));
    seen.add(f.name);
    const unit = resolveFormulaUnit(f.unit, units);
    // The result is compared with reporting limits, blank limits and spikes, and reported, in the
    // concentration unit: a result column in another unit would be judged silently wrong.
    if (f.name === 'pre_extraction_conc' && unit !== '' && normaliseUnitText(unit) !== normaliseUnitText(units.concentration)) {
      throw new StopError(
        'method',
        `formula "pre_extraction_conc" is the result, which limits, spikes and reported results are in: expected its unit to be the concentration unit (${units.concentration}) or "concentration", got "${f.unit}"`,
        at(['formulas', i, 'unit']),
      );
    }
    return {
      name: f.name,
      expr: f.expr,
      unit,
      description: f.description,
      line: lineOf(doc, lineCounter, ['formulas', i, 'expr']),
    };
  });

  const outlierTest = raw.qc?.outlier_test ?? GENERIC_QC.outlierTest;
  const alpha = raw.qc?.alpha ?? GENERIC_QC.alpha;
  if (outlierTest === 'dixon' && !DIXON_ALPHAS.some((a) => Math.abs(a - alpha) < 1e-12)) {
    // Dixon's critical values exist only as a table (Rorabacher 1991): refuse an alpha it lacks.
    throw new StopError('method', `expected an alpha of ${DIXON_ALPHAS.join(', ')} for Dixon's Q test, got ${alpha}`, at(['qc', 'alpha']));
  }

  return {
    name: raw.name,
    title: raw.title ?? raw.name,
    version: raw.version === undefined ? undefined : String(raw.version),
    description: raw.description,
    file,
    text,
    sha256: createHash('sha256').update(text, 'utf8').digest('hex'),
    units,
    fields,
    sampleTypes,
    sampleTypeLevels,
    numberFormat: raw.number_format,
    nonDetects: raw.non_detects ?? [],
    analytes,
    defaults: { reporting_limit: raw.defaults?.reporting_limit },
    limits: mergeLimitTables(GENERIC_LIMITS, (raw.limits ?? {}) as LimitTable),
    qc: {
      limitsSource: raw.qc?.limits ?? GENERIC_QC.limitsSource,
      outlierTest,
      alpha,
      runRule: raw.qc?.run_rule ?? GENERIC_QC.runRule,
      runRuleAll: raw.qc?.run_rule_all ?? GENERIC_QC.runRuleAll,
      runRulePerLevel: raw.qc?.run_rule_per_level ?? GENERIC_QC.runRulePerLevel,
    },
    internalStandard: {
      window: (raw.internal_standard?.window as Range | undefined) ?? GENERIC_INTERNAL_STANDARD.window,
      reference: raw.internal_standard?.reference ?? GENERIC_INTERNAL_STANDARD.reference,
    },
    reporting: {
      significantFigures: raw.reporting?.significant_figures ?? GENERIC_REPORTING.significantFigures,
      rounding: raw.reporting?.rounding ?? GENERIC_REPORTING.rounding,
      aboveRange: raw.reporting?.above_range ?? GENERIC_REPORTING.aboveRange,
      withUncertainty: raw.reporting?.with_uncertainty ?? GENERIC_REPORTING.withUncertainty,
    },
    calibration: { includesExtraction: raw.calibration?.includes_extraction ?? false },
    figures: {
      minPointsRw: raw.figures?.min_points_rw ?? DEFAULT_MIN_RW,
      minPointsBias: raw.figures?.min_points_bias ?? DEFAULT_MIN_BIAS,
    },
    formulas,
  };
}

/** Shallow merge per control type: the override's keys win, levels merged by name. */
export function mergeLimitTables(base: LimitTable, override: LimitTable): LimitTable {
  const out: LimitTable = { ...base };
  for (const [kind, set] of Object.entries(override) as [keyof LimitTable, LimitTable[keyof LimitTable]][]) {
    if (!set) continue;
    const prev = out[kind] ?? {};
    out[kind] = { ...prev, ...set, levels: { ...(prev.levels ?? {}), ...(set.levels ?? {}) } };
  }
  return out;
}

/** µ (U+00B5) and μ (U+03BC) are the micro prefix; mathjs spells it u. */

function resolveFormulaUnit(unit: string | undefined, units: Method['units']): string {
  if (unit === undefined) return '';
  if (unit === 'volume') return units.volume;
  if (unit === 'concentration') return units.concentration;
  if (unit === 'extract_concentration') return units.extract_concentration;
  if (unit === 'percent') return '%';
  return unit;
}

/** A key path as a reader writes it: `formulas[2].expr`, `analytes.Caffeine.pka`. */
export function keyPath(path: readonly (string | number)[]): string {
  return path.map((p, i) => (typeof p === 'number' ? `[${p}]` : i === 0 ? p : `.${p}`)).join('');
}

function pointerToPath(pointer: string): (string | number)[] {
  if (!pointer) return [];
  return pointer
    .split('/')
    .slice(1)
    .map((p) => p.replace(/~1/g, '/').replace(/~0/g, '~'))
    .map((p) => (/^\d+$/.test(p) ? Number(p) : p));
}

function valueAt(data: unknown, path: (string | number)[]): unknown {
  let cur: unknown = data;
  for (const p of path) {
    if (cur === null || typeof cur !== 'object') return undefined;
    cur = (cur as Record<string | number, unknown>)[p];
  }
  return cur;
}

function lineOf(doc: Document, counter: LineCounter, path: (string | number)[]): number | undefined {
  for (let len = path.length; len >= 0; len--) {
    const node = len === 0 ? doc.contents : doc.getIn(path.slice(0, len), true);
    if (isNode(node) && node.range) return counter.linePos(node.range[0]).line;
    // A scalar key's own position: look for the pair in its parent map.
    if (len > 0) {
      const parent = len === 1 ? doc.contents : doc.getIn(path.slice(0, len - 1), true);
      const items = (parent as { items?: Array<{ key?: { value?: unknown; range?: [number, number, number] } }> } | null)?.items;
      const pair = items?.find((it) => it.key?.value === path[len - 1]);
      if (pair?.key?.range) return counter.linePos(pair.key.range[0]).line;
    }
  }
  return undefined;
}

function firstLine(text: string): string {
  // The YAML library recurses per level of nesting: a document nested thousands deep overflows its stack.
  if (/Maximum call stack size exceeded/.test(text)) return 'it is nested too deeply to read (a method needs a few levels)';
  return text.split('\n')[0]!.replace(/\.$/, '');
}

interface RawLimitSet {
  recovery?: number[];
  rpd_max?: number;
  levels?: Record<string, RawLimitSet>;
}
interface RawMethod {
  name: string;
  title?: string;
  version?: string | number;
  description?: string;
  units?: { volume?: string; concentration?: string; extract_concentration?: string };
  fields?: Record<string, { aliases?: string[]; unit?: string; default?: number | string }>;
  sample_types?: Record<string, SampleType | { type: SampleType; level?: string }>;
  number_format?: { decimal_mark: '.' | ','; grouping?: 'none' | '.' | ',' | ' ' | "'" };
  non_detects?: string[];
  analytes?: Record<
    string,
    {
      aliases?: string[];
      partition_coeff?: number;
      log_k?: number;
      pka?: number;
      acid_base?: string;
      ph?: number;
      reporting_limit?: number;
      calibration_range?: number[];
      molar_mass?: number;
      surrogate?: boolean;
      limits?: Record<string, RawLimitSet>;
      spike_uncertainty_pct?: number;
      expanded_uncertainty_pct?: number;
    }
  >;
  defaults?: { reporting_limit?: number };
  limits?: Record<string, RawLimitSet>;
  qc?: {
    limits?: 'fixed' | 'in_house';
    outlier_test?: 'grubbs' | 'dixon' | 'none';
    alpha?: number;
    run_rule?: 'auto' | 'on' | 'off';
    run_rule_all?: number;
    run_rule_per_level?: number;
  };
  internal_standard?: { window?: number[]; reference?: SampleType[] };
  reporting?: { significant_figures?: number; rounding?: Rounding; above_range?: string; with_uncertainty?: boolean };
  calibration?: { includes_extraction?: boolean };
  figures?: { min_points_rw?: number; min_points_bias?: number };
  formulas: Array<{ name: string; expr: string; unit?: string; description?: string }>;
}
