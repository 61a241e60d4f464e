/**
 * `phasebook figures --history FILE [--since D] [--until D] [--json]`: per method and
 * analyte, the measurement uncertainty (Nordtest TR 537) and the method detection limit
 * (40 CFR 136 Appendix B Rev. 2) from the QC history written by `recalc --history`,
 * over the runs of the last 24 months unless told otherwise. Reads the history only.
 */
import type { Command } from 'commander';
import { StopError } from '../errors.js';
import { readHistoryWithMethods } from '../history/store.js';
import { fmt } from '../qc/context.js';
import { computeFigures, defaultPeriod, figuresJson, rowsInPeriod, settingsFromHistory, type FigureEntry, type Period } from '../figures/figures.js';
import type { Uncertainty } from '../figures/nordtest.js';
import type { BlanksRule } from '../figures/mdl.js';
import { EXIT, type CommandIo } from './io.js';

interface FiguresCliOptions {
  history: string;
  since?: string;
  until?: string;
  json?: boolean;
}

export function registerFiguresCommand(program: Command, io: CommandIo): void {
  program
    .command('figures')
    .description("show the lab's own measurement uncertainty and method detection limits from a QC history")
    .requiredOption('--history <file>', 'QC history file written by "recalc --history"')
    .option('--since <date>', 'first day of the period (YYYY-MM-DD or an ISO 8601 time; default 24 months before --until)')
    .option('--until <date>', 'last day of the period, inclusive (default now)')
    .option('--json', 'print a JSON document instead of text')
    .action(async (opts: FiguresCliOptions) => {
      const out = io.stdout ?? ((text: string) => void process.stdout.write(text));
      out(await runFigures(opts));
      io.exit(EXIT.ok);
    });
}

/** The period the options ask for; a located usage error for a date that cannot be read. */
export function periodOf(opts: { since?: string; until?: string }, now: Date = new Date()): Period {
  const until = opts.until === undefined ? now : readDate(opts.until, '--until', 'end');
  const period = defaultPeriod(until);
  if (opts.since !== undefined) period.since = readDate(opts.since, '--since', 'start').toISOString();
  if (Date.parse(period.since) > Date.parse(period.until)) {
    throw new StopError('usage', `--since ${period.since} is after --until ${period.until}: expected a period that starts before it ends`);
  }
  return period;
}

function readDate(text: string, option: string, edge: 'start' | 'end'): Date {
  const day = /^\s*(\d{4})-(\d{2})-(\d{2})\s*$/.exec(text);
  if (day) {
    // A plain date is a whole day: --since from its first millisecond, --until to its last.
    const d = new Date(Date.UTC(Number(day[1]), Number(day[2]) - 1, Number(day[3])));
    if (d.getUTCFullYear() === Number(day[1]) && d.getUTCMonth() === Number(day[2]) - 1 && d.getUTCDate() === Number(day[3])) {
      return edge === 'start' ? d : new Date(d.getTime() + 86_400_000 - 1);
    }
  } else {
    const t = Date.parse(text);
    if (!Number.isNaN(t) && /\d{4}-\d{2}-\d{2}T/.test(text)) return new Date(t);
  }
  throw new StopError('usage', `${option}: expected a date such as 2026-01-31 or an ISO 8601 time such as 2026-01-31T12:00:00Z, got "${text}"`);
}

async function runFigures(opts: FiguresCliOptions): Promise<string> {
  const period = periodOf(opts);
  const { rows, methods } = await readHistoryWithMethods(opts.history);
  const inPeriod = rowsInPeriod(rows, period);
  const entries = computeFigures(inPeriod, settingsFromHistory(inPeriod, methods));
  const runs = new Set(inPeriod.map((r) => r.runId)).size;
  if (opts.json) {
    return JSON.stringify({ history: opts.history, since: period.since, until: period.until, runs, figures: figuresJson(entries) }, null, 2) + '\n';
  }
  const head = `Figures from ${opts.history}: ${runs} run${runs === 1 ? '' : 's'} from ${period.since} to ${period.until}.\n`;
  if (entries.length === 0) return head + 'The history holds no controls in this period.\n';
  return head + entries.map(describeEntry).join('\n');
}

export function describeEntry(e: FigureEntry): string {
  const lines = [`${e.method}, ${e.analyte}${e.unit ? ` (${e.unit})` : ''}`];
  const cref = e.spikeUncertaintyStated ? `u(Cref) ${fmt(e.uncertainty.uCrefPct)} % as the method states` : 'u(Cref) 0 %: the method states no spike_uncertainty_pct';
  if (e.levels.length > 0 && e.uncertainty.nRw === 0 && e.uncertainty.nBias === 0) {
    // A bioanalytical method: no lcs or matrix spikes at all, so the figures are per qc level.
    lines.push(`  Measurement uncertainty (Nordtest TR 537), per qc level (no lcs or matrix spikes recorded); ${cref}`);
  } else {
    lines.push(`  Measurement uncertainty (Nordtest TR 537), lcs and matrix spikes: ${describeU(e.uncertainty, 'lcs recoveries', 'ms and msd recoveries')}; ${cref}`);
  }
  for (const l of e.levels) lines.push(`  qc level ${l.level || '(none)'}: ${describeU(l.uncertainty, `recoveries at ${l.level || 'no level'}`, 'the same recoveries (their mean)')}`);
  if (e.fixedExpandedPct !== undefined) lines.push(`  The method states a fixed U of ${fmt(e.fixedExpandedPct)} % (k = 2); results carry that one`);
  const m = e.mdl;
  if (Number.isFinite(m.mdl)) {
    const b = m.blanksRule === 'not_applicable' ? `MDL_b does not apply (${BLANK_RULES.not_applicable})` : `MDL_b ${fmt(m.mdlB)} from ${m.nBlanks} blanks (${BLANK_RULES[m.blanksRule!]})`;
    lines.push(`  Method detection limit (40 CFR 136 App. B Rev. 2): MDL ${fmt(m.mdl)} ${e.unit}, the larger of MDL_s ${fmt(m.mdlS)} from ${m.nSpikes} mdl spikes and ${b}`);
  } else {
    lines.push(`  Method detection limit (40 CFR 136 App. B Rev. 2): none yet: ${m.reasons.join('; ')}`);
  }
  if (e.pointsWithoutResult > 0) lines.push(`  ${e.pointsWithoutResult} blank or mdl row${e.pointsWithoutResult === 1 ? '' : 's'} recorded before schema version 3 carry no result and are left out`);
  lines.push(`  Settings: ${e.settingsSource}`);
  return lines.join('\n') + '\n';
}

const BLANK_RULES: Record<BlanksRule, string> = {
  not_applicable: 'no blank gave a numerical result',
  highest: 'some blanks not detected: the highest blank result',
  mean_plus_t_s: 'every blank numerical: mean (0 if negative) + t(n−1, 0.99)·s',
  percentile_99: 'more than 100 blanks: their 99th percentile',
};

function describeU(u: Uncertainty, rwWhat: string, biasWhat: string): string {
  const parts: string[] = [];
  if (Number.isFinite(u.expandedPct)) {
    parts.push(`U ${fmt(u.expandedPct)} % (k = ${u.k}), u_c ${fmt(u.ucPct)} %`);
  } else {
    parts.push('no U yet');
  }
  parts.push(Number.isFinite(u.uRwPct) ? `u(Rw) ${fmt(u.uRwPct)} % from ${u.nRw} ${rwWhat}` : `u(Rw) needs ${u.moreRw} more ${rwWhat} (${u.nRw} recorded)`);
  parts.push(Number.isFinite(u.uBiasPct) ? `u(bias) ${fmt(u.uBiasPct)} % from ${u.nBias} ${biasWhat}` : `u(bias) needs ${u.moreBias} more ${biasWhat} (${u.nBias} recorded)`);
  return parts.join(', ');
}
