/**
 * A first method drafted from a worklist's headers (`phasebook method draft`),
 * for the analyst to finish.
 *
 * Each header is placed on a canonical field in three passes, strongest first:
 * its canonical name ("sample_volume", "Sample ID"), a name labs commonly use
 * ("Sample Name", "Dil", "Spike Added"), then a telling word ("DCM per Portion",
 * "Plasma Vol"). A unit in brackets or parentheses after the name narrows the
 * choice (a volume can only be a volume field, a concentration only a
 * concentration field) and becomes the unit the column is read in. What cannot be
 * placed is listed as YAML comments; the sample-type codes found in the type
 * column become a sample_types map (common codes guessed, the rest left to
 * complete); the analytes found get empty entries; the formulas are those of
 * templates/generic-lle.yaml.
 *
 * The text always loads and compiles (`phasebook method check` passes); what is
 * left to do is written in it as comments.
 */
import { readFileSync } from 'node:fs';
import { basename, extname } from 'node:path';
import { parseDocument, isMap, isScalar } from 'yaml';
import { CANONICAL_FIELDS, FIELD_SPECS, SAMPLE_TYPES, headerKey, type CanonicalField, type Dimension, type SampleType } from '../../domain/fields.js';
import { splitHeaderUnit, unitKind, type UnitKind } from '../../columns/units.js';
import { cellText } from '../../columns/numbers.js';
import type { RawTable } from '../../read/types.js';
import { GENERIC_LIMITS, GENERIC_QC } from '../../method/defaults.js';
import { normaliseUnitText } from '../../columns/units.js';
import type { ControlKind, LimitSet } from '../../domain/method.js';

const GENERIC_METHOD_URL = new URL('../../../templates/generic-lle.yaml', import.meta.url);

/** How a header was recognised, strongest first. */
export type PlacementHow = 'canonical name' | 'known name' | 'word';

export interface HeaderPlacement {
  /** Index into RawTable.headers. */
  column: number;
  /** The header as the lab wrote it. */
  header: string;
  field: CanonicalField;
  /** The header without its unit: what the draft writes as the field's alias. */
  alias: string;
  /** Unit text from the header's brackets, normalised (µ → u); undefined when none. */
  unit?: string;
  how: PlacementHow;
  /** The word that decided a 'word' placement. */
  word?: string;
}

export interface UnplacedHeader {
  column: number;
  header: string;
  reason: string;
}

export interface SampleTypeCode {
  /** The code as first written in the worklist. */
  code: string;
  /** The canonical type: the code itself when canonical, else a guess; undefined when unknown. */
  type?: SampleType;
  /** Why no guess was made, for codes that could mean two things. */
  ambiguous?: string;
}

export interface DraftResult {
  name: string;
  /** The method as YAML text. */
  text: string;
  placed: HeaderPlacement[];
  unplaced: UnplacedHeader[];
  /** Required fields no header was placed on. */
  missing: CanonicalField[];
  /** Optional fields with a default that no header was placed on, each with the unplaced headers that may feed it. */
  defaulted: Array<{ field: CanonicalField; fallback: string; maybe: string[] }>;
  sampleTypes: SampleTypeCode[];
  analytes: string[];
  units: { volume: string; concentration: string; extract_concentration: string };
}

export interface DraftOptions {
  /** Method name; default: the worklist's file name, made into a valid name. */
  name?: string;
  /** Path of method.schema.json to name in the editor hint comment; omitted when not given. */
  schemaRef?: string;
}

/** Names labs commonly give a field (compared as headerKey: no case, spaces or punctuation). */
const KNOWN_NAMES: Record<CanonicalField, readonly string[]> = {
  sample_id: ['sample', 'sample name', 'sample code', 'sample no', 'sample number', 'lab id', 'lab no', 'lab number', 'client id', 'client sample id', 'id', 'name'],
  sample_type: ['type', 'qc code', 'qc type', 'kind', 'sample class', 'class', 'role', 'category', 'sample kind', 'sample type code'],
  parent_id: ['parent', 'parent sample', 'spiked from', 'native', 'native sample', 'source sample', 'original sample', 'spike of', 'duplicate of', 'dup of'],
  batch_id: ['batch', 'prep batch', 'preparation batch', 'extraction batch', 'run', 'run id', 'series', 'sequence'],
  analyte: ['compound', 'analyte name', 'compound name', 'drug', 'substance', 'component', 'parameter'],
  extract_conc: ['extract', 'extract conc', 'extract concentration', 'extract result', 'result', 'measured', 'measured conc', 'measured concentration', 'conc', 'concentration', 'calc conc', 'calculated conc', 'found', 'instrument result'],
  sample_volume: ['sample vol', 'sample volume', 'vol', 'volume', 'aliquot', 'aliquot volume', 'sample size', 'sample amount'],
  solvent_volume: ['solvent', 'solvent vol', 'extractant', 'extractant volume', 'organic volume', 'solvent per portion', 'portion volume', 'solvent per extraction'],
  extractions: ['portions', 'n extractions', 'number of extractions', 'no of extractions', 'n portions', 'number of portions', 'repeats'],
  final_volume: ['final vol', 'extract volume', 'extract vol', 'recon', 'recon vol', 'recon volume', 'reconstitution', 'reconstitution volume', 'made up to', 'make up volume', 'final extract volume'],
  dilution: ['dil', 'df', 'dilution factor', 'dil factor'],
  partition_coeff: ['k', 'kd', 'partition coefficient', 'partition coeff', 'partition constant'],
  log_k: ['log kd'],
  ph: ['extraction ph', 'sample ph', 'adjusted ph'],
  pka: [],
  acid_base: ['acid or base', 'ionisation', 'ionization'],
  spike_conc: ['spike', 'spike conc', 'spike concentration', 'spike added', 'spike amount', 'spike level', 'added', 'nominal', 'nominal conc', 'nominal concentration', 'fortification', 'fortification level', 'true value', 'expected'],
  qc_level: ['level', 'concentration level'],
  reporting_limit: ['rl', 'mrl', 'loq', 'limit of quantitation', 'limit of quantification'],
  istd_response: ['is response', 'istd response', 'is area', 'istd area', 'internal standard response', 'internal standard area', 'is peak area', 'istd peak area'],
};

/** Telling words, tried in this order on headers no name matched. */
const WORD_RULES: ReadonlyArray<{ field: CanonicalField; words: RegExp; needs?: RegExp }> = [
  { field: 'parent_id', words: /\b(parent|native|original|spiked from|spike of|duplicate of)\b/ },
  { field: 'sample_type', words: /\b(type|kind|class|role|category|qc code)\b/ },
  { field: 'batch_id', words: /\b(batch|run|series|sequence)\b/ },
  { field: 'analyte', words: /\b(analyte|compound|substance|drug|component)\b/ },
  { field: 'spike_conc', words: /\b(spike|spiked|added|nominal|fortified|fortification)\b/ },
  { field: 'qc_level', words: /\b(level)\b/ },
  { field: 'reporting_limit', words: /\b(rl|mrl|loq|reporting limit|limit of quantit\w*)\b/ },
  { field: 'extractions', words: /\b(portions|extractions|repeats|number of|no of)\b/ },
  { field: 'dilution', words: /\b(dil|dilution|diluted|df)\b/ },
  { field: 'log_k', words: /\b(log ?kd?)\b/ },
  { field: 'partition_coeff', words: /\b(partition|kd)\b/ },
  { field: 'pka', words: /\b(pka)\b/ },
  { field: 'ph', words: /\b(ph)\b/ },
  {
    field: 'solvent_volume',
    words: /\b(solvent|extractant|organic|portion|dcm|dichloromethane|mtbe|ether|hexane|heptane|chloroform|toluene|ethyl acetate|isoamyl|iaa)\b/,
  },
  { field: 'final_volume', words: /\b(recon\w*|reconst\w*|redissolved|taken up|made up|make up|up to)\b/ },
  { field: 'final_volume', words: /\b(final)\b/, needs: /\b(vol|volume)\b|^$/ },
  { field: 'final_volume', words: /\b(extract)\b/, needs: /\b(vol|volume)\b|^$/ },
  { field: 'sample_volume', words: /\b(sample|aliquot|plasma|serum|blood|urine|water|juice|drink|milk|wine|beer|matrix)\b/, needs: /\b(vol|volume|size|amount)\b|^$/ },
  { field: 'extract_conc', words: /\b(extract|result|measured|found|conc|concentration)\b/ },
  { field: 'sample_id', words: /\b(sample|name|id|code)\b/ },
];

/** Common sample-type codes (compared as headerKey). Codes that mean two things in different labs are not guessed. */
const KNOWN_CODES: Record<SampleType, readonly string[]> = {
  sample: ['samp', 'smp', 'unk', 'unknown', 'test', 'client', 'routine', 'study', 'subject'],
  blank: ['mb', 'blk', 'method blank', 'rb', 'reagent blank', 'pb', 'procedural blank', 'lrb', 'db', 'double blank', 'dblk', 'zero', 'zero sample', 'zs'],
  lcs: ['bs', 'blank spike', 'spiked blank', 'lfb', 'lcs'],
  lcsd: ['bsd', 'blank spike dup', 'spiked blank dup', 'lfbd'],
  ms: ['matrix spike', 'fs', 'fortified sample', 'lfm', 'spk'],
  msd: ['matrix spike dup', 'matrix spike duplicate', 'fsd', 'lfmd', 'spkd'],
  dup: ['duplicate', 'rep', 'replicate', 'sd', 'sample duplicate'],
  qc: ['qcl', 'qcm', 'qch', 'lqc', 'mqc', 'hqc', 'qc sample'],
  mdl: ['mdl', 'mdl spike', 'detection limit spike'],
  calibrator: ['cal', 'cal std', 'calibrator', 'calibration', 'std', 'standard', 'sst', 'system suitability', 'curve'],
};
const AMBIGUOUS_CODES: Record<string, string> = {
  fb: 'a fortified blank (lcs) or a field blank (blank)',
  spike: 'a blank spike (lcs) or a matrix spike (ms)',
};

const DIMENSIONLESS_UNITS = new Set(['', '-', '1', 'x', 'n', 'count', 'ph']);
const MAX_ANALYTES = 200;

/** Draft a method from a worklist as read (only its headers, type column and analyte column are used). */
export function draftMethod(raw: RawTable, options: DraftOptions = {}): DraftResult {
  const { placed, unplaced } = placeHeaders(raw.headers);
  const byField = new Map(placed.map((p) => [p.field, p]));
  const missing = [...FIELD_SPECS.values()].filter((s) => s.required && !byField.has(s.name)).map((s) => s.name);
  const units = chooseUnits(byField);
  const typeColumn = byField.get('sample_type');
  const sampleTypes = typeColumn ? sampleTypeCodes(distinctCells(raw, typeColumn.column)) : [];
  const analyteColumn = byField.get('analyte');
  const analytes = analyteColumn ? distinctCells(raw, analyteColumn.column) : [];
  const name = options.name ?? methodName(raw.source);
  const defaulted = defaultedFields(byField, unplaced.map((u) => headerParts(u.header)));
  const text = writeDraft({ raw, name, placed, unplaced, missing, defaulted, units, sampleTypes, analytes, schemaRef: options.schemaRef });
  return { name, text, placed, unplaced, missing, defaulted, sampleTypes, analytes, units };
}

/** What each optional field falls back to when no column feeds it (DESIGN.md §4). */
const FALLBACKS: Partial<Record<CanonicalField, { fallback: string; plausible: (h: HeaderParts) => boolean }>> = {
  final_volume: { fallback: 'extractions × solvent_volume (the whole extract, never concentrated or made up)', plausible: (h) => h.kind === 'volume' },
  extractions: { fallback: '1 extraction', plausible: (h) => /\b(n|number|times|count|portion|step|repeat)\w*\b/.test(h.words) },
  dilution: { fallback: 'no dilution (1)', plausible: (h) => /\b(dil\w*|factor|df)\b/.test(h.words) },
};

/**
 * The optional fields that would fall back to a default, and the unplaced headers that may
 * feed them: a draft never lets a field a header plausibly feeds default without saying so
 * (a "Reconst. (µL)" left unplaced made the final volume n × solvent volume, 4× off).
 */
function defaultedFields(byField: ReadonlyMap<CanonicalField, HeaderPlacement>, unplaced: readonly HeaderParts[]): DraftResult['defaulted'] {
  const out: DraftResult['defaulted'] = [];
  for (const [field, f] of Object.entries(FALLBACKS) as Array<[CanonicalField, NonNullable<(typeof FALLBACKS)[CanonicalField]>]>) {
    if (byField.has(field)) continue;
    out.push({ field, fallback: f.fallback, maybe: unplaced.filter(f.plausible).map((h) => h.header) });
  }
  return out;
}

/** Recognise one header without regard to the others; undefined when nothing fits. */
export function recogniseHeader(header: string): Omit<HeaderPlacement, 'column'> | undefined {
  const [first] = placeHeaders([header]).placed;
  return first ? { header: first.header, field: first.field, alias: first.alias, unit: first.unit, how: first.how, word: first.word } : undefined;
}

interface HeaderParts {
  header: string;
  /** Name without the unit (the whole header when the brackets hold no unit). */
  name: string;
  unit?: string;
  /** What the header's unit measures; 'none' when it gives no unit. */
  kind: UnitKind | 'none';
  words: string;
}

function headerParts(header: string): HeaderParts {
  const split = splitHeaderUnit(header);
  let name = split.name;
  let unit = split.unit === undefined ? undefined : normaliseUnitText(split.unit);
  let kind: HeaderParts['kind'] = 'none';
  if (unit !== undefined) {
    const k = unitKind(unit);
    if (k) kind = k;
    else if (DIMENSIONLESS_UNITS.has(unit.toLowerCase())) unit = undefined;
    else {
      // "Result (final)": the brackets hold words, not a unit; keep them in the name.
      name = header.trim();
      unit = undefined;
    }
  }
  const words = name
    .normalize('NFKC')
    .toLowerCase()
    .replace(/[^\p{L}\p{N}]+/gu, ' ')
    .trim();
  return { header, name, unit, kind, words };
}

function fits(dimension: Dimension, kind: HeaderParts['kind']): boolean {
  if (kind === 'none') return true;
  if (kind === 'volume') return dimension === 'volume';
  return dimension === 'concentration' || dimension === 'extract_concentration';
}

const canonicalKeys = new Map<string, CanonicalField>(CANONICAL_FIELDS.map((f) => [headerKey(f), f]));
const knownKeys = new Map<string, CanonicalField>();
for (const field of CANONICAL_FIELDS) for (const n of KNOWN_NAMES[field]) knownKeys.set(headerKey(n), field);

function placeHeaders(headers: readonly string[]): { placed: HeaderPlacement[]; unplaced: UnplacedHeader[] } {
  const parts = headers.map(headerParts);
  const taken = new Map<CanonicalField, number>();
  const placement = new Array<HeaderPlacement | undefined>(headers.length);
  const wanted = new Array<CanonicalField | undefined>(headers.length);

  const place = (i: number, how: { field: CanonicalField; how: PlacementHow; word?: string }) => {
    const { field } = how;
    const p = parts[i]!;
    wanted[i] ??= field;
    if (taken.has(field) || !fits(FIELD_SPECS.get(field)!.dimension, p.kind)) return false;
    taken.set(field, i);
    placement[i] = { column: i, header: p.header, field, alias: p.name, unit: p.unit, how: how.how, word: how.word };
    return true;
  };
  // Pass 1: canonical names, on the whole header or on its name part (what mapColumns also reads).
  parts.forEach((p, i) => {
    const field = canonicalKeys.get(headerKey(p.header)) ?? canonicalKeys.get(headerKey(p.name));
    if (field) place(i, { field, how: 'canonical name' });
  });
  // Pass 2: names labs commonly use.
  parts.forEach((p, i) => {
    if (placement[i]) return;
    const field = knownKeys.get(headerKey(p.name));
    if (field) place(i, { field, how: 'known name' });
  });
  // Pass 3: telling words; the first rule whose field is free and fits the unit.
  parts.forEach((p, i) => {
    if (placement[i]) return;
    for (const rule of WORD_RULES) {
      const m = rule.words.exec(p.words);
      if (!m) continue;
      if (rule.needs && !rule.needs.test(p.kind === 'volume' ? '' : p.words)) continue;
      if (place(i, { field: rule.field, how: 'word', word: m[1] })) return;
    }
  });

  const placed = placement.filter((p): p is HeaderPlacement => p !== undefined);
  const unplaced: UnplacedHeader[] = [];
  parts.forEach((p, i) => {
    if (placement[i]) return;
    unplaced.push({ column: i, header: p.header, reason: unplacedReason(p, wanted[i], { taken, headers, placed }) });
  });
  return { placed, unplaced };
}

function unplacedReason(
  p: HeaderParts,
  wanted: CanonicalField | undefined,
  ctx: { taken: Map<CanonicalField, number>; headers: readonly string[]; placed: HeaderPlacement[] },
): string {
  const clash = ctx.placed.find((x) => headerKey(x.alias) === headerKey(p.name) || headerKey(x.alias) === headerKey(p.header));
  if (clash) {
    return `has the same name as column "${clash.header}" (${clash.field}); rename one of them, or recalc stops on a field given twice`;
  }
  if (wanted && ctx.taken.has(wanted)) {
    const other = ctx.headers[ctx.taken.get(wanted)!]!;
    const canonical = canonicalKeys.get(headerKey(p.header)) ?? canonicalKeys.get(headerKey(p.name));
    const warning = canonical ? '; it is the canonical name, so recalc would read both: rename or remove one' : '';
    return `looks like ${wanted}, which column "${other}" already gives${warning}`;
  }
  if (p.kind === 'volume') return 'a volume, but not recognisably the sample, solvent or final volume';
  if (p.kind === 'mass_concentration' || p.kind === 'molar_concentration') {
    return 'a concentration, but not recognisably the extract result, spike or reporting limit';
  }
  if (wanted) return `looks like ${wanted}, but its unit "${p.unit ?? ''}" does not fit`;
  return 'no canonical field matches this header';
}

function chooseUnits(byField: Map<CanonicalField, HeaderPlacement>): DraftResult['units'] {
  const unitOf = (field: CanonicalField, kinds: UnitKind[]) => {
    const p = byField.get(field);
    if (!p?.unit) return undefined;
    const k = unitKind(p.unit);
    return k && kinds.includes(k) ? p.unit : undefined;
  };
  const conc: UnitKind[] = ['mass_concentration', 'molar_concentration'];
  const volume = unitOf('sample_volume', ['volume']) ?? unitOf('solvent_volume', ['volume']) ?? unitOf('final_volume', ['volume']) ?? 'mL';
  const extract = unitOf('extract_conc', conc);
  const concentration = unitOf('spike_conc', conc) ?? unitOf('reporting_limit', conc) ?? extract ?? 'ng/mL';
  return { volume, concentration, extract_concentration: extract ?? concentration };
}

/** Distinct non-empty cells of a column, in first-seen order, compared without case. */
function distinctCells(raw: RawTable, column: number): string[] {
  const seen = new Set<string>();
  const out: string[] = [];
  for (const cell of raw.columns[column] ?? []) {
    const text = cellText(cell).trim();
    const key = text.toLowerCase();
    if (text === '' || seen.has(key)) continue;
    seen.add(key);
    out.push(text);
  }
  return out;
}

const knownCodes = new Map<string, SampleType>();
for (const type of SAMPLE_TYPES) for (const c of KNOWN_CODES[type]) knownCodes.set(headerKey(c), type);

function sampleTypeCodes(codes: readonly string[]): SampleTypeCode[] {
  return codes.map((code) => {
    const lower = code.toLowerCase();
    if ((SAMPLE_TYPES as readonly string[]).includes(lower)) return { code, type: lower as SampleType };
    const key = headerKey(code);
    if (AMBIGUOUS_CODES[key]) return { code, ambiguous: AMBIGUOUS_CODES[key] };
    return { code, type: knownCodes.get(key) };
  });
}

function methodName(source: string): string {
  const base = basename(source, extname(source));
  const cleaned = base.replace(/[^A-Za-z0-9_.-]+/g, '-').replace(/^[^A-Za-z0-9]+/, '').replace(/-+$/, '');
  return cleaned === '' ? 'draft' : cleaned;
}

/** A YAML double-quoted scalar (JSON string syntax is valid YAML). */
const q = (s: string) => JSON.stringify(s);

function writeDraft(d: {
  raw: RawTable;
  name: string;
  placed: HeaderPlacement[];
  unplaced: UnplacedHeader[];
  missing: CanonicalField[];
  defaulted: DraftResult['defaulted'];
  units: DraftResult['units'];
  sampleTypes: SampleTypeCode[];
  analytes: string[];
  schemaRef?: string;
}): string {
  const out: string[] = [];
  const put = (...lines: string[]) => out.push(...lines);
  if (d.schemaRef) put(`# yaml-language-server: $schema=${d.schemaRef}`, '#');
  put(
    `# First draft of a method, written by \`phasebook method draft\` from the headers of`,
    `# ${d.raw.source}. Finish it before use:`,
    '#   - check each field below (how its header was recognised is noted beside it);',
    '#   - fill in the analyte data: partition coefficient, pKa and acid/base, reporting limit;',
    '#   - complete the sample-type codes;',
    "#   - set the acceptance limits to the lab's own.",
    '# Then run `phasebook method check` on this file.',
  );
  if (d.unplaced.length) {
    put('#', '# Columns not placed (they are kept verbatim in the outputs):');
    for (const u of d.unplaced) put(`#   ${q(u.header)}: ${u.reason}`);
  }
  if (d.missing.length) {
    put(
      '#',
      `# Required fields with no column: ${d.missing.join(', ')}. Add the lab's header under`,
      '# fields.<field>.aliases, or give a fixed value, e.g.  solvent_volume: { default: 60 }',
    );
  }
  put(
    '',
    `name: ${q(d.name)}`,
    `title: ${q(`Draft from ${basename(d.raw.source)}`)}`,
    'version: 1',
    `description: ${q('First draft from the worklist headers; to be completed and checked by the lab.')}`,
    '',
    'units:',
    `  volume: ${q(d.units.volume)}`,
    `  concentration: ${q(d.units.concentration)}`,
    `  extract_concentration: ${q(d.units.extract_concentration)}`,
  );
  if (unitKind(d.units.concentration) !== unitKind(d.units.extract_concentration)) {
    put('  # One concentration is molar and the other by mass: give each analyte its molar_mass.');
  }

  put('');
  const byField = new Map(d.placed.map((p) => [p.field, p]));
  if (byField.size === 0) put('# fields: no header could be placed; name each field\'s header under fields.<field>.aliases');
  else put('# The worklist header of each canonical field; a unit in brackets in the header is used as written.', 'fields:');
  const width = Math.max(...CANONICAL_FIELDS.map((f) => f.length)) + 1;
  const aliasWidth = Math.max(0, ...d.placed.map((p) => `{ aliases: [${q(p.alias)}] }`.length));
  for (const field of CANONICAL_FIELDS) {
    const p = byField.get(field);
    if (!p) continue;
    const spec = FIELD_SPECS.get(field)!;
    const how = p.how === 'word' ? `by the word "${p.word}"` : `by its ${p.how}`;
    let note = `${q(p.header)}, ${how}`;
    if (spec.dimension !== 'none') {
      const unitWord = spec.dimension === 'volume' ? d.units.volume : spec.dimension === 'extract_concentration' ? d.units.extract_concentration : d.units.concentration;
      note += p.unit ? `; unit ${p.unit} from the header` : `; no unit in the header, read in ${unitWord}: check`;
    }
    put(`  ${`${field}:`.padEnd(width)} ${`{ aliases: [${q(p.alias)}] }`.padEnd(aliasWidth)}   # ${note}`);
  }
  for (const field of d.missing) put(`  # ${`${field}:`.padEnd(width)} { aliases: ["..."] }   # required: no column found`);
  for (const f of d.defaulted) {
    const maybe = f.maybe.length ? `; CHECK: ${f.maybe.map((h) => q(h)).join(', ')} may be it` : '';
    put(`  # ${`${f.field}:`.padEnd(width)} no column: ${f.fallback}${maybe}`);
  }

  put('');
  const active = d.sampleTypes.filter((c) => c.type && c.type !== c.code.toLowerCase());
  const canonical = d.sampleTypes.filter((c) => c.type && c.type === c.code.toLowerCase());
  const open = d.sampleTypes.filter((c) => !c.type);
  if (!byField.has('sample_type')) put('# No sample-type column: every row is read as a sample.');
  else {
    put(`# Sample-type codes found in column ${q(byField.get('sample_type')!.header)}, mapped onto ${SAMPLE_TYPES.join(', ')}.`);
    if (canonical.length) put(`# Already canonical, read as they are: ${canonical.map((c) => c.code).join(', ')}.`);
    if (active.length) put('sample_types:');
    else if (open.length) put('# sample_types:');
    const codeWidth = Math.max(0, ...active.map((c) => `${q(c.code)}: ${c.type}`.length));
    for (const c of active) put(`  ${`${q(c.code)}: ${c.type}`.padEnd(codeWidth)}   # guessed from the code: check`);
    for (const c of open) {
      put(`  # ${q(c.code)}: ...   # ${c.ambiguous ? `could be ${c.ambiguous}: choose` : `not recognised: choose one of ${SAMPLE_TYPES.join(', ')}`}`);
    }
  }

  put('');
  if (!byField.has('analyte')) put('# No analyte column found: analytes cannot be listed.');
  else if (d.analytes.length === 0) put('# The analyte column is empty: no analytes to list.');
  else {
    put(
      `# Analytes found in column ${q(byField.get('analyte')!.header)}. For each, give what the lab knows:`,
      '#   partition_coeff (or log_k), pka and acid_base (acid, base or neutral), ph,',
      '#   reporting_limit, calibration_range: [low, high], molar_mass, surrogate: true.',
      'analytes:',
    );
    for (const a of d.analytes.slice(0, MAX_ANALYTES)) put(`  ${q(a)}: {}`);
    if (d.analytes.length > MAX_ANALYTES) put(`  # … and ${d.analytes.length - MAX_ANALYTES} more analytes not listed`);
  }

  put('', "# Generic acceptance limits (inclusive); change them to the lab's own.", 'limits:');
  for (const [kind, set] of Object.entries(GENERIC_LIMITS) as [ControlKind, LimitSet][]) put(...limitLines(kind, set));

  put(
    '',
    'qc:',
    `  outlier_test: ${GENERIC_QC.outlierTest}`,
    `  alpha: ${GENERIC_QC.alpha}`,
    `  run_rule: ${GENERIC_QC.runRule}`,
    '',
    '# The generic formulas (templates/generic-lle.yaml).',
    genericFormulasText(),
  );
  return out.join('\n').replace(/\n*$/, '\n');
}

function limitLines(kind: ControlKind, set: LimitSet): string[] {
  const indent = '  ';
  const parts: string[] = [];
  if (set.recovery) parts.push(`recovery: [${set.recovery[0]}, ${set.recovery[1]}]`);
  if (set.rpd_max !== undefined) parts.push(`rpd_max: ${set.rpd_max}`);
  const levels = Object.entries(set.levels ?? {});
  if (levels.length === 0) return [`${indent}${kind}: { ${parts.join(', ')} }`];
  const lines = [`${indent}${kind}:`, ...parts.map((p) => `${indent}  ${p}`), `${indent}  levels:`];
  for (const [level, lv] of levels) {
    const lp: string[] = [];
    if (lv.recovery) lp.push(`recovery: [${lv.recovery[0]}, ${lv.recovery[1]}]`);
    if (lv.rpd_max !== undefined) lp.push(`rpd_max: ${lv.rpd_max}`);
    lines.push(`${indent}    ${level}: { ${lp.join(', ')} }`);
  }
  return lines;
}

/** The `formulas:` block of the canonical method, exactly as written there. */
function genericFormulasText(): string {
  const text = readFileSync(GENERIC_METHOD_URL, 'utf8');
  const doc = parseDocument(text);
  const root = doc.contents;
  if (isMap(root)) {
    const pair = root.items.find((it) => isScalar(it.key) && it.key.value === 'formulas');
    const keyRange = isScalar(pair?.key) ? pair.key.range : undefined;
    const valueRange = (pair?.value as { range?: [number, number, number] } | null)?.range;
    if (keyRange && valueRange) return text.slice(keyRange[0], valueRange[1]).trimEnd();
  }
  throw new Error(`${GENERIC_METHOD_URL.pathname} has no formulas block`);
}
