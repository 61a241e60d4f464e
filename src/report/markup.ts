/**
 * Safe HTML building: every interpolated value is escaped unless it is already
 * markup (`Markup`, made only by `html` or `trusted`). Worklist text (sample ids,
 * analyte names, batch ids, messages that quote cell values) can therefore never
 * become tags or attributes in the report.
 */

export class Markup {
  constructor(readonly text: string) {}
  toString(): string {
    return this.text;
  }
}

export type Interpolation = Markup | string | number | null | undefined | readonly Interpolation[];

const ENTITIES: Record<string, string> = { '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' };

/** Text made safe for element content and quoted attribute values. */
export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => ENTITIES[c]!);
}

/** Markup we produced ourselves (e.g. an SVG rendered by the chart library), passed through as is. */
export function trusted(text: string): Markup {
  return new Markup(text);
}

/** Tagged template: the literal parts are markup, every value is escaped (arrays are joined). */
export function html(strings: TemplateStringsArray, ...values: Interpolation[]): Markup {
  let out = strings[0]!;
  for (let i = 0; i < values.length; i++) out += render(values[i]) + strings[i + 1]!;
  return new Markup(out);
}

function render(value: Interpolation): string {
  if (value === null || value === undefined) return '';
  if (value instanceof Markup) return value.text;
  if (Array.isArray(value)) return value.map(render).join('');
  return escapeHtml(String(value));
}
