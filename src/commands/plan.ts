/**
 * `phasebook plan`: the ways to reach a target extraction efficiency before the
 * extraction is run. For an analyte (K or log K; pKa and acid/base when it is
 * ionisable), a sample volume and a target:
 * - the efficiency of 1, 2 … n equal portions sharing one total solvent volume;
 * - the solvent needed per portion and in total for n portions;
 * - how many portions of the given solvent volume, repeated, reach the target;
 * - the pH at which the analyte is at least 99 % neutral, beside the common-practice
 *   rule of thumb of 2 pH units past the pKa.
 * The arithmetic is chemistry/extraction-plan.ts; this module reads options and chooses words.
 *
 * With `--target-mdl C --history FILE --analyte A` it plans the detection limit instead: the
 * present MDL from the QC history (figures/) and the sample volume estimated to bring it under
 * C, where that can be supported (figures/mdl-target.ts). A target U is refused with the reason:
 * the Nordtest route measures the uncertainty a procedure gives; it offers no way back from a
 * target to a change of procedure.
 */
import { significant } from '../format.js';
import { InvalidArgumentError, Option, type Command } from 'commander';
import { distributionRatio, neutralFraction } from '../chemistry/partition.js';
import { efficiencyTable, neutralPh, portionsFor, solventVolumeFor } from '../chemistry/extraction-plan.js';
import { StopError } from '../errors.js';
import { readHistoryWithMethods } from '../history/store.js';
import { computeFigures, rowsInPeriod, settingsFromHistory, type Period } from '../figures/figures.js';
import { planMdlTarget, SPIKE_TIMES_MDL, type MdlTargetPlan } from '../figures/mdl-target.js';
import { periodOf } from './figures.js';
import { EXIT, type CommandIo } from './io.js';

/** The neutral fraction the pH advice aims at. */
const NEUTRAL_TARGET = 0.99;
const MAX_PORTIONS_LIMIT = 100;

export interface PlanInput {
  /** Partition coefficient K of the neutral form (give this or logK). */
  k?: number;
  logK?: number;
  pka?: number;
  acidBase?: 'acid' | 'base';
  /** pH of the aqueous phase during extraction; without it an ionisable analyte is taken as wholly neutral. */
  ph?: number;
  /** Aqueous sample volume, mL. */
  sampleVolume: number;
  /** Total solvent volume to share between portions, mL; also the portion volume that is repeated. */
  solventVolume?: number;
  /** Fraction to extract, 0..1 (default 0.99). */
  target: number;
  /** Most portions to tabulate (default 6). */
  maxPortions: number;
}

export interface PlanReport {
  input: PlanInput & { volumeUnit: 'mL' };
  partitionCoeff: number;
  /** Fraction neutral at the given pH (1 for a neutral analyte or when no pH is given). */
  neutralFraction: number;
  distributionRatio: number;
  /** Portions sharing the total solvent volume; empty without --solvent-volume. */
  split: Array<{ portions: number; portionVolume: number; efficiency: number; remaining: number; reachesTarget: boolean }>;
  /** Fewest portions of the shared total that reach the target, null when none up to maxPortions. */
  fewestSplitPortions: number | null;
  solventNeeded: Array<{ portions: number; portionVolume: number; totalVolume: number }>;
  /** Portions of the given solvent volume repeated until the target is reached. */
  repeat: { portionVolume: number; portions: number; efficiency: number; totalVolume: number } | null;
  ph: {
    acidBase: 'acid' | 'base';
    pka: number;
    neutralTarget: number;
    bound: 'upper' | 'lower';
    /** pH at (beyond) which at least neutralTarget of the analyte is neutral. */
    ph: number;
    ruleOfThumbPh: number;
    ruleOfThumbNeutralFraction: number;
  } | null;
  notes: string[];
}

/** All the numbers of a plan (fractions 0..1, volumes in mL). Throws StopError('usage') on bad input. */
export function planExtraction(input: PlanInput): PlanReport {
  if ((input.k === undefined) === (input.logK === undefined)) {
    throw new StopError('usage', 'expected one of --k or --log-k, the partition coefficient of the neutral form');
  }
  if ((input.pka === undefined) !== (input.acidBase === undefined)) {
    throw new StopError('usage', input.pka === undefined ? 'expected --pka with --acid or --base' : 'expected --acid or --base with --pka');
  }
  if (input.ph !== undefined && !(input.ph >= 0 && input.ph <= 14)) {
    throw new StopError('usage', `expected a pH from 0 to 14, got "${input.ph}"`);
  }
  if (!Number.isInteger(input.maxPortions) || input.maxPortions < 1 || input.maxPortions > MAX_PORTIONS_LIMIT) {
    throw new StopError('usage', `expected --max-portions as a whole number from 1 to ${MAX_PORTIONS_LIMIT}, got "${input.maxPortions}"`);
  }
  const k = input.k ?? 10 ** input.logK!;
  if (!(k > 0) || !Number.isFinite(k)) throw new StopError('usage', `expected a partition coefficient above 0, got "${input.k ?? input.logK}"`);

  const notes: string[] = [];
  let f = 1;
  if (input.acidBase && input.pka !== undefined) {
    if (input.ph === undefined) {
      notes.push(`no --ph given: D is taken as K, the ${input.acidBase} wholly neutral; give --ph for the pH you will extract at`);
    } else {
      f = neutralFraction(input.ph, input.pka, input.acidBase);
    }
  } else if (input.ph !== undefined) {
    notes.push('a neutral analyte: the pH does not change D');
  }
  const d = input.acidBase && input.ph !== undefined ? distributionRatio(k, input.ph, input.pka!, input.acidBase) : k;

  const split: PlanReport['split'] = [];
  let fewest: number | null = null;
  let repeat: PlanReport['repeat'] = null;
  if (input.solventVolume !== undefined) {
    for (const row of efficiencyTable({ d, sampleVolume: input.sampleVolume, totalSolventVolume: input.solventVolume, maxPortions: input.maxPortions })) {
      const reaches = row.efficiency >= input.target;
      if (reaches && fewest === null) fewest = row.portions;
      split.push({ ...row, remaining: 1 - row.efficiency, reachesTarget: reaches });
    }
    const r = portionsFor({ d, sampleVolume: input.sampleVolume, portionVolume: input.solventVolume, target: input.target });
    repeat = { portionVolume: input.solventVolume, ...r };
  } else {
    notes.push('no --solvent-volume given: the table of portions sharing one solvent volume is left out');
  }
  const solventNeeded: PlanReport['solventNeeded'] = [];
  for (let n = 1; n <= input.maxPortions; n++) {
    solventNeeded.push({ portions: n, ...solventVolumeFor({ d, sampleVolume: input.sampleVolume, target: input.target, portions: n }) });
  }

  let ph: PlanReport['ph'] = null;
  if (input.acidBase && input.pka !== undefined) {
    const p = neutralPh({ pka: input.pka, acidBase: input.acidBase, neutralFraction: NEUTRAL_TARGET });
    ph = {
      acidBase: input.acidBase,
      pka: input.pka,
      neutralTarget: NEUTRAL_TARGET,
      ...p,
      ruleOfThumbNeutralFraction: neutralFraction(p.ruleOfThumbPh, input.pka, input.acidBase),
    };
    if (input.ph !== undefined && f < NEUTRAL_TARGET) {
      notes.push(`at pH ${fmt(input.ph)} only ${pct(f)} of the ${input.acidBase} is neutral: ${p.bound === 'upper' ? 'lower' : 'raise'} the pH to ${fmt(p.ph)} or ${p.bound === 'upper' ? 'below' : 'above'}`);
    }
  }

  return {
    input: { ...input, volumeUnit: 'mL' },
    partitionCoeff: k,
    neutralFraction: f,
    distributionRatio: d,
    split,
    fewestSplitPortions: fewest,
    solventNeeded,
    repeat,
    ph,
    notes,
  };
}

/** The plan as tables for a terminal. */
export function formatPlan(r: PlanReport): string {
  const i = r.input;
  const target = pct(i.target);
  const out: string[] = [];
  const species = i.acidBase ? `${i.acidBase}, pKa ${fmt(i.pka!)}` : 'neutral';
  const kText = i.logK !== undefined ? `log K ${fmt(i.logK)} (K ${fmt(r.partitionCoeff)})` : `K ${fmt(r.partitionCoeff)}`;
  out.push(`Plan for ${kText}, ${species}; sample ${fmt(i.sampleVolume)} mL; target ${target} extracted. Volumes in mL.`);
  const atPh = i.ph !== undefined && i.acidBase ? ` at pH ${fmt(i.ph)} (${pct(r.neutralFraction)} neutral)` : '';
  out.push(`Distribution ratio D = ${fmt(r.distributionRatio)}${atPh}`);

  if (r.split.length) {
    out.push('', `${fmt(i.solventVolume!)} mL of solvent shared between equal portions`);
    out.push(
      ...table([
        ['portions', 'each (mL)', 'extracted', 'left in water', `reaches ${target}`],
        ...r.split.map((s) => [String(s.portions), fmt(s.portionVolume), pct(s.efficiency), sig3(s.remaining), s.reachesTarget ? 'yes' : 'no']),
      ]),
    );
    out.push(
      r.fewestSplitPortions === null
        ? `  No split up to ${i.maxPortions} portions reaches ${target}: use more solvent or more portions.`
        : `  Fewest portions that reach ${target}: ${r.fewestSplitPortions}.`,
    );
  }

  out.push('', `Solvent needed to extract ${target}`);
  out.push(
    ...table([
      ['portions', 'each (mL)', 'total (mL)'],
      ...r.solventNeeded.map((s) => [String(s.portions), fmt(s.portionVolume), fmt(s.totalVolume)]),
    ]),
  );

  if (r.repeat) {
    const p = r.repeat;
    out.push(
      '',
      `Repeating portions of ${fmt(p.portionVolume)} mL: ${p.portions} portion${p.portions === 1 ? '' : 's'} (${fmt(p.totalVolume)} mL in all) extract ${pct(p.efficiency)}.`,
    );
  }

  if (r.ph) {
    const p = r.ph;
    const side = p.bound === 'upper' ? 'at or below' : 'at or above';
    const past = p.acidBase === 'acid' ? 'below' : 'above';
    out.push('', `pH for the ${p.acidBase} (pKa ${fmt(p.pka)})`);
    // Rounded towards the safe side: down for an acid's upper bound, up for a base's lower bound.
    const shown = p.bound === 'upper' ? Math.floor(p.ph * 100 + 1e-9) / 100 : Math.ceil(p.ph * 100 - 1e-9) / 100;
    out.push(`  at least ${pct(p.neutralTarget)} neutral ${side} pH ${shown.toFixed(2)} (pKa ${p.bound === 'upper' ? '−' : '+'} ${fmt(Math.abs(p.ph - p.pka))})`);
    out.push(`  rule of thumb, 2 pH units ${past} the pKa: pH ${fmt(p.ruleOfThumbPh)} (${pct(p.ruleOfThumbNeutralFraction)} neutral)`);
  }
  if (r.notes.length) out.push('', ...r.notes.map((n) => `Note: ${n}`));
  return out.join('\n') + '\n';
}

interface PlanCliOptions {
  k?: number;
  logK?: number;
  pka?: number;
  acid?: boolean;
  base?: boolean;
  ph?: number;
  sampleVolume: number;
  solventVolume?: number;
  target: number;
  maxPortions: number;
  json?: boolean;
  targetMdl?: number;
  targetU?: number;
  history?: string;
  analyte?: string;
  method?: string;
  until?: string;
}

export function registerPlanCommand(program: Command, io: CommandIo): Command {
  const stdout = io.stdout ?? ((t: string) => void process.stdout.write(t));
  const stderr = io.stderr ?? ((t: string) => void process.stderr.write(t));
  return program
    .command('plan')
    .description('plan an extraction: efficiency of n portions, the solvent or portions needed for a target, and the pH that keeps an ionisable analyte neutral (volumes in mL)')
    .addOption(new Option('--k <K>', 'partition coefficient K = C_org/C_aq of the neutral form').argParser(number('a partition coefficient above 0', (x) => x > 0)).conflicts('logK'))
    .addOption(new Option('--log-k <logK>', 'log10 of the partition coefficient').argParser(number('a log K')))
    .addOption(new Option('--pka <pKa>', 'pKa of the acid, or of the conjugate acid of a base').argParser(number('a pKa')))
    .addOption(new Option('--acid', 'the analyte is an acid (HA extracts)').conflicts('base'))
    .addOption(new Option('--base', 'the analyte is a base (B extracts)'))
    .addOption(new Option('--ph <pH>', 'pH of the sample during extraction').argParser(number('a pH from 0 to 14', (x) => x >= 0 && x <= 14)))
    .addOption(new Option('--sample-volume <mL>', 'aqueous sample volume, in mL').argParser(number('a volume in mL above 0', (x) => x > 0)).makeOptionMandatory())
    .addOption(new Option('--solvent-volume <mL>', 'total solvent volume to share between portions, in mL').argParser(number('a volume in mL above 0', (x) => x > 0)))
    .addOption(new Option('--target <fraction>', 'fraction to extract, e.g. 0.99 or 99%').argParser(parseTarget).default(0.99, '0.99'))
    .addOption(new Option('--max-portions <n>', 'most portions to tabulate').argParser(number('a whole number')).default(6))
    .option('--json', 'print the plan as JSON')
    .addOption(new Option('--target-mdl <conc>', "a method detection limit to reach, in the method's concentration unit: plans the sample volume from the QC history (with --history and --analyte)").argParser(number('a concentration above 0', (x) => x > 0)))
    .addOption(new Option('--target-u <pct>', 'an expanded uncertainty to reach, percent (refused: see the message)').argParser(number('a percentage above 0', (x) => x > 0)))
    .option('--history <file>', 'with --target-mdl: the QC history written by "recalc --history"')
    .option('--analyte <name>', 'with --target-mdl: the analyte (any case)')
    .option('--method <name>', 'with --target-mdl: the method, when the history holds the analyte under more than one')
    .option('--until <date>', 'with --target-mdl: the end of the 24 months the MDL is taken from (default now)')
    .action(async (opts: PlanCliOptions) => {
      try {
        if (opts.targetU !== undefined) throw new StopError('usage', TARGET_U_REFUSED);
        if (opts.targetMdl !== undefined) {
          const plan = await planFromHistory(opts);
          stdout(opts.json ? JSON.stringify(plan, (_k, v) => (typeof v === 'number' && !Number.isFinite(v) ? null : v), 2) + '\n' : formatMdlPlan(plan));
          io.exit(EXIT.ok);
          return;
        }
        const mdlOnly = (['history', 'analyte', 'method', 'until'] as const).find((k) => opts[k] !== undefined);
        if (mdlOnly) throw new StopError('usage', `--${mdlOnly} belongs to --target-mdl: expected --target-mdl with it`);
        const report = planExtraction({
          k: opts.k,
          logK: opts.logK,
          pka: opts.pka,
          acidBase: opts.acid ? 'acid' : opts.base ? 'base' : undefined,
          ph: opts.ph,
          sampleVolume: opts.sampleVolume,
          solventVolume: opts.solventVolume,
          target: opts.target,
          maxPortions: opts.maxPortions,
        });
        stdout(opts.json ? JSON.stringify(report, null, 2) + '\n' : formatPlan(report));
        io.exit(EXIT.ok);
      } catch (err) {
        if (!(err instanceof StopError)) throw err;
        stderr(`phasebook: ${err.describe()}\n`);
        io.exit(EXIT.stop);
      }
    });
}

/** Why a target U gives no plan, in words (issue 16, point 4: say so where the procedure does not support it). */
export const TARGET_U_REFUSED =
  '--target-u: no plan for a target expanded uncertainty: the Nordtest route (TR 537) measures the uncertainty a procedure gives, from its control and matrix spike recoveries; it offers no way back from a target U to a change of sample volume, solvent or pH. Run "phasebook figures" to see which part (u(Rw) or the bias) dominates';

/** The MDL plan: the present figures of one method and analyte from the history, then planMdlTarget. */
export async function planFromHistory(opts: PlanCliOptions, now: Date = new Date()): Promise<MdlTargetPlan & { history: string; period: Period }> {
  const extraction = (['k', 'logK', 'pka', 'acid', 'base', 'ph', 'solventVolume'] as const).find((k) => opts[k] !== undefined);
  if (extraction) throw new StopError('usage', `--target-mdl plans the sample volume from the QC history: expected no extraction options with it, got --${extraction.replace(/[A-Z]/g, (c) => `-${c.toLowerCase()}`)}`);
  if (opts.history === undefined || opts.analyte === undefined) throw new StopError('usage', '--target-mdl: expected --history FILE and --analyte NAME with it');
  const period = periodOf({ until: opts.until }, now);
  const { rows, methods } = await readHistoryWithMethods(opts.history);
  const inPeriod = rowsInPeriod(rows, period);
  const entries = computeFigures(inPeriod, settingsFromHistory(inPeriod, methods));
  const wanted = opts.analyte.trim().toLowerCase();
  let found = entries.filter((e) => e.analyte.toLowerCase() === wanted);
  if (found.length === 0) {
    const names = [...new Set(entries.map((e) => e.analyte))].map((a) => `"${a}"`).join(', ');
    throw new StopError('usage', `--analyte: expected an analyte the history holds in the 24 months to ${period.until.slice(0, 10)} (${names || 'none'}), got "${opts.analyte}"`);
  }
  if (opts.method !== undefined) {
    const byMethod = found.filter((e) => e.method === opts.method);
    if (byMethod.length === 0) throw new StopError('usage', `--method: expected one of the methods the history holds "${found[0]!.analyte}" under (${found.map((e) => `"${e.method}"`).join(', ')}), got "${opts.method}"`);
    found = byMethod;
  } else if (found.length > 1) {
    throw new StopError('usage', `--analyte "${opts.analyte}": the history holds it under more than one method (${found.map((e) => `"${e.method}"`).join(', ')}): expected --method`);
  }
  const entry = found[0]!;
  if (!Number.isFinite(entry.mdl.mdl)) {
    throw new StopError('input', `no present MDL for "${entry.analyte}" (method "${entry.method}") to plan from: ${entry.mdl.reasons.join('; ')}`, { file: opts.history });
  }
  return { history: opts.history, period, ...planMdlTarget(entry, { target: opts.targetMdl!, sampleVolume: opts.sampleVolume }) };
}

export function formatMdlPlan(p: MdlTargetPlan & { history: string; period: Period }): string {
  const u = p.unit;
  const out = [
    `Plan for an MDL of ${fmt(p.target)} ${u}: ${p.analyte}, method ${p.method}, from ${p.history} (runs of ${p.period.since.slice(0, 10)} to ${p.period.until.slice(0, 10)})`,
    `Present MDL (40 CFR 136 App. B Rev. 2): ${fmt(p.mdl)} ${u}, the larger of MDL_s ${fmt(p.mdlS)} and ${Number.isFinite(p.mdlB) ? `MDL_b ${fmt(p.mdlB)}` : 'MDL_b (does not apply)'}; sample volume now ${fmt(p.sampleVolume)} mL`,
  ];
  if (p.outcome === 'met') {
    out.push(`The present MDL already meets the target: nothing to change.`);
  } else if (p.outcome === 'not_supported') {
    out.push(`No sample volume to propose: ${p.reasons.join('; ')}`);
  } else {
    out.push(
      `Estimated: a sample of at least ${fmt(ceilSignificant(p.neededSampleVolume!, 4))} mL brings MDL_s to ${fmt(p.target)} ${u} (MDL_s × ${fmt(p.sampleVolume)} mL / target)`,
      ...p.assumptions.map((a) => `  assuming ${a}`),
      `  spike the new determination at ${fmt(p.spikeLevel![0])} to ${fmt(p.spikeLevel![1])} ${u} (${SPIKE_TIMES_MDL[0]} to ${SPIKE_TIMES_MDL[1]} times the estimated MDL, Rev. 2 §2(a))`,
      'A new sample volume changes the method: 40 CFR 136 App. B Rev. 2 asks for the MDL to be determined again after such a change. This is an estimate to plan that determination, not an MDL.',
    );
  }
  return out.join('\n') + '\n';
}

/** x rounded up to `sig` significant figures (a volume that must not fall short). */
function ceilSignificant(x: number, sig: number): number {
  const scale = 10 ** (Math.floor(Math.log10(x)) - sig + 1);
  return Math.ceil(x / scale - 1e-9) * scale;
}

/** A number option; `accept` narrows it, so commander's message names the option and the value. */
function number(what: string, accept: (x: number) => boolean = () => true): (text: string) => number {
  return (text) => {
    const t = text.trim();
    const x = t === '' ? NaN : Number(t);
    if (!Number.isFinite(x) || !accept(x)) throw new InvalidArgumentError(`expected ${what}, got "${text}"`);
    return x;
  };
}

/** 0.99, or a percentage written with a % sign (99%, 99.9 %). */
function parseTarget(text: string): number {
  const m = /^\s*([0-9]*\.?[0-9]+(?:[eE][+-]?\d+)?)\s*(%?)\s*$/.exec(text);
  const x = m ? Number(m[1]) / (m[2] ? 100 : 1) : NaN;
  if (!(x > 0 && x < 1)) throw new InvalidArgumentError(`expected a fraction above 0 and below 1 such as 0.99, or a percentage such as 99.9%, got "${text}"`);
  return x;
}

/** Percent with two decimals, more when two would round a fraction below 1 up to 100.00 %. */
function pct(x: number): string {
  let decimals = 2;
  while (decimals < 8 && x < 1 && Number((100 * x).toFixed(decimals)) >= 100) decimals++;
  return `${(100 * x).toFixed(decimals)} %`;
}

/** Up to 4 significant figures, no exponent for ordinary sizes. */
function fmt(x: number): string {
  return significant(x, 4);
}

function sig3(x: number): string {
  if (x !== 0 && Math.abs(x) < 1e-6) return x.toExponential(2);
  return String(Number(x.toPrecision(3)));
}

function table(rows: string[][]): string[] {
  const widths: number[] = [];
  for (const r of rows) r.forEach((c, i) => (widths[i] = Math.max(widths[i] ?? 0, c.length)));
  return rows.map((r) => '  ' + r.map((c, i) => (i === r.length - 1 ? c : c.padEnd(widths[i]!))).join('  ').trimEnd());
}
