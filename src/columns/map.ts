import { StopError } from '../errors.js';
import type { Method } from '../domain/method.js';
import type { RawTable } from '../read/types.js';
import { CANONICAL_FIELDS, FIELD_SPECS, headerKey, type CanonicalField, type Dimension } from '../domain/fields.js';
import { conversionFactor, splitHeaderUnit, unitKind } from './units.js';

/** Where a canonical field comes from in the worklist, and its unit. */
export interface FieldSource {
  field: CanonicalField;
  /** Index into RawTable.columns. */
  column: number;
  /** The header as the lab wrote it (for messages). */
  header: string;
  /** Unit the cells are written in ('' for dimensionless fields). */
  fromUnit: string;
  /** Unit the engine computes in. */
  toUnit: string;
  /** Multiply to convert; undefined when it depends on the analyte (molar ↔ mass). */
  factor?: number;
}

export interface ColumnMap {
  fields: Map<CanonicalField, FieldSource>;
  /** Raw column indexes that map to no field (kept verbatim in the outputs). */
  unmapped: number[];
  /** What the mapping decided that the user should hear (a header unit it could not read, and what it used). */
  notes: string[];
}

/** The unit the method computes a dimension in. */
export function methodUnit(method: Method, dimension: Dimension): string {
  switch (dimension) {
    case 'volume':
      return method.units.volume;
    case 'concentration':
      return method.units.concentration;
    case 'extract_concentration':
      // Extract results are computed in the sample concentration unit too, so the
      // mass balance needs no hidden factor; extract_concentration is only the
      // unit the instrument reports in (the default "from" unit).
      return method.units.concentration;
    default:
      return '';
  }
}

/**
 * Map the lab's headers onto canonical fields (method aliases first, then the
 * canonical names), with the unit each column is written in. Stops on a missing
 * required column, a field given twice, or a unit that cannot be converted.
 */
export function mapColumns(table: RawTable, method: Method): ColumnMap {
  const line = table.headerRow ?? 1;
  const byKey = new Map<string, CanonicalField>();
  // Canonical names first, so a method alias may take over a canonical spelling on purpose.
  for (const field of CANONICAL_FIELDS) byKey.set(headerKey(field), field);
  for (const [field, cfg] of method.fields) for (const alias of cfg.aliases) byKey.set(headerKey(alias), field);

  const fields = new Map<CanonicalField, FieldSource>();
  const unmapped: number[] = [];
  const notes: string[] = [];
  table.headers.forEach((header, column) => {
    const whole = byKey.get(headerKey(header));
    const split = splitHeaderUnit(header);
    const field = whole ?? byKey.get(headerKey(split.name));
    if (!field) {
      unmapped.push(column);
      return;
    }
    const previous = fields.get(field);
    if (previous) {
      throw new StopError('input', `the field ${field} is given twice, in columns "${previous.header}" and "${header}"; expected one column per field`, {
        file: table.source,
        line,
        column: header,
      });
    }
    const spec = FIELD_SPECS.get(field)!;
    const toUnit = methodUnit(method, spec.dimension);
    const writtenIn = spec.dimension === 'extract_concentration' ? method.units.extract_concentration : toUnit;
    const declared = method.fields.get(field)?.unit;
    let fromUnit = split.unit ?? declared ?? writtenIn;
    // A header unit that cannot be read, where the method says the field's unit: the method's unit is
    // used, and the run says so (a unit that reads as another kind still stops the run below).
    if (split.unit !== undefined && declared !== undefined && spec.dimension !== 'none' && !unitKind(split.unit)) {
      notes.push(`column "${header}": "${split.unit}" is not a unit phasebook reads; the method's unit for ${field}, ${declared}, is used`);
      fromUnit = declared;
    }
    if (spec.dimension === 'none') {
      if (split.unit && !whole && !isDimensionlessUnit(split.unit)) {
        throw new StopError('input', `expected no unit for ${field}, got "${split.unit}"`, { file: table.source, line, column: header });
      }
      fromUnit = '';
    }
    let factor: number | undefined = 1;
    if (fromUnit !== '' && fromUnit !== toUnit) {
      const kindFrom = unitKind(fromUnit);
      const kindTo = unitKind(toUnit);
      if (!kindFrom) {
        throw new StopError('input', `cannot read "${fromUnit}" as a unit; expected ${unitWanted(spec.dimension)}`, { file: table.source, line, column: header });
      }
      const molarInvolved = kindFrom === 'molar_concentration' || kindTo === 'molar_concentration';
      const sameKind = kindFrom === kindTo;
      if (molarInvolved && !sameKind) {
        factor = undefined; // per analyte, from its molar mass
        const concFrom = kindFrom !== 'volume';
        const concTo = kindTo !== 'volume';
        if (!concFrom || !concTo) {
          throw new StopError('input', `cannot convert "${fromUnit}" to ${toUnit}; expected ${unitWanted(spec.dimension)}`, { file: table.source, line, column: header });
        }
      } else {
        try {
          factor = conversionFactor(fromUnit, toUnit);
        } catch (err) {
          throw new StopError('input', `${(err as Error).message}; expected ${unitWanted(spec.dimension)}`, {
            file: table.source,
            line,
            column: header,
          });
        }
      }
    }
    fields.set(field, { field, column, header, fromUnit, toUnit, factor });
  });

  for (const spec of FIELD_SPECS.values()) {
    if (!spec.required || fields.has(spec.name)) continue;
    const cfg = method.fields.get(spec.name);
    if (cfg?.default !== undefined) continue;
    const aliases = cfg?.aliases.length ? ` (or ${cfg.aliases.map((a) => `"${a}"`).join(', ')})` : '';
    throw new StopError('input', `missing the required column "${spec.name}"${aliases}`, { file: table.source, line });
  }
  return { fields, unmapped, notes };
}

/** What a header's unit should have been, for messages. */
function unitWanted(dimension: Dimension): string {
  return dimension === 'volume' ? 'a volume unit such as mL, uL or L' : 'a concentration unit such as ng/mL, ug/L or nmol/L';
}

function isDimensionlessUnit(unit: string): boolean {
  return ['', '-', '1', 'x', 'n', 'count', 'ph'].includes(unit.trim().toLowerCase());
}
