import { CommanderError } from 'commander';
import { describe, expect, it } from 'vitest';
import { formatPlan, planExtraction, registerPlanCommand, type PlanReport } from '../../src/commands/plan.js';
import { StopError } from '../../src/errors.js';
import { runCommand } from '../helpers/command.js';

// Worked examples from REFERENCES.md §1 (E1, E3, E4, E5), each attributed there and named beside its check.

/** A published figure given to `decimals` places agrees when within half a unit of its last place. */
function expectPublished(value: number, published: number, decimals: number): void {
  expect(Math.abs(value - published)).toBeLessThanOrEqual(0.5 * 10 ** -decimals + 1e-12);
}

/** Run `phasebook plan ...` in process; commander errors come back as `error`. */
const plan = (args: string[]) => runCommand(registerPlanCommand, ['plan', ...args]);

async function planJson(args: string[]): Promise<PlanReport> {
  const r = await plan([...args, '--json']);
  expect(r.code).toBe(0);
  return JSON.parse(r.stdout) as PlanReport;
}

describe('plan against published worked examples', () => {
  it('E1 — Harris, Quantitative Chemical Analysis: K = 3, 100 mL water, one 500 mL portion or five of 100 mL', async () => {
    const p = await planJson(['--k', '3', '--sample-volume', '100', '--solvent-volume', '500', '--max-portions', '5']);
    expect(p.distributionRatio).toBe(3);
    expect(p.split.map((s) => s.portionVolume)).toEqual([500, 250, 500 / 3, 125, 100]);
    expectPublished(p.split[0]!.remaining, 0.062, 3); // published q = 0.062
    expectPublished(100 * p.split[0]!.efficiency, 93.8, 1); // published 93.8 %
    expect(p.split[0]!.efficiency).toBeCloseTo(0.9375, 12); // exact, REFERENCES.md E1 computed
    expectPublished(100 * p.split[4]!.efficiency, 99.9, 2); // published 99.90 %
    expect(p.split[4]!.remaining).toBeCloseTo(9.765625e-4, 12); // exact (1/4)^5, REFERENCES.md E1 computed
    expect(p.split[4]!.reachesTarget).toBe(true); // 99.90 % ≥ the default target 99 %
    expect(p.fewestSplitPortions).toBe(3); // computed: q2 = (100/850)^2 = 0.0138 > 0.01, q3 = (100/600)^3 = 0.00463 ≤ 0.01
  });

  it('E3 — Harvey, Analytical Chemistry 2.0 §7.7: K_D 5.00, 50.00 mL water, 15.00 mL chloroform, target 99.9 %', async () => {
    const p = await planJson(['--k', '5', '--sample-volume', '50', '--solvent-volume', '15', '--target', '0.999', '--max-portions', '3']);
    expectPublished(100 * p.split[0]!.efficiency, 60.0, 1); // published 60.0 % in one 15.00 mL portion
    expect(p.split[2]!.portionVolume).toBe(5);
    expectPublished(100 * p.split[2]!.efficiency, 70.4, 1); // published 70.4 % with three 5.00 mL portions
    expect(p.solventNeeded[0]!.totalVolume).toBeCloseTo(9990, 6); // published 9990 mL for 99.9 % in one step
    expect(p.repeat).not.toBeNull();
    expect(p.repeat!.portions).toBe(8); // published: 8 portions of 15.00 mL reach 99.9 %
    expect(p.repeat!.totalVolume).toBe(120);
    expect(p.repeat!.efficiency).toBeCloseTo(1 - 0.4 ** 8, 12); // computed: q = 0.400 per portion
    expect(p.fewestSplitPortions).toBeNull(); // 15 mL cannot reach 99.9 % however it is split (computed, limit 1 − e^−1.5 = 77.7 %)
  });

  it.each([
    // Harvey §7.7 weak acid: Ka 1.00e-5 (pKa 5.00), K_D 3.00, 50.00 mL water + 50.00 mL hexane
    { ph: '3', d: 2.9703, published: 74.8, decimals: 1 }, // published 74.8 % at pH 3.00; D computed in REFERENCES.md E4
    { ph: '5', d: 1.5, published: 60, decimals: 0 }, // published 60 % at pH 5.00
  ])('E4 — Harvey §7.7 weak acid at pH $ph', async ({ ph, d, published, decimals }) => {
    const p = await planJson(['--k', '3', '--pka', '5', '--acid', '--ph', ph, '--sample-volume', '50', '--solvent-volume', '50', '--max-portions', '1']);
    expect(p.distributionRatio).toBeCloseTo(d, 4);
    expectPublished(100 * p.split[0]!.efficiency, published, decimals);
  });

  it('E4 — Harvey §7.7 weak acid: the exact value 74.81 % at pH 3.00 (REFERENCES.md E4 computed)', async () => {
    const p = await planJson(['--k', '3', '--pka', '5', '--acid', '--ph', '3', '--sample-volume', '50', '--solvent-volume', '50', '--max-portions', '1']);
    expect(100 * p.split[0]!.efficiency).toBeCloseTo(74.81, 2);
    expect(p.neutralFraction).toBeCloseTo(1 / 1.01, 12); // f = 1/(1 + 10^(3 − 5))
  });

  it('E5 — Harris amine example: K 3.0, Ka(BH+) 1.0e-9, 50 mL water + 100 mL solvent at pH 10.00 and 8.00', async () => {
    const at10 = await planJson(['--k', '3', '--pka', '9', '--base', '--ph', '10', '--sample-volume', '50', '--solvent-volume', '100', '--max-portions', '1']);
    expectPublished(at10.distributionRatio, 2.73, 2); // published D = 2.73
    expect(0.01 * at10.split[0]!.remaining).toBeCloseTo(0.0015, 4); // published C_aq = 0.0015 M from 0.010 M
    const at8 = await planJson(['--k', '3', '--pka', '9', '--base', '--ph', '8', '--sample-volume', '50', '--solvent-volume', '100', '--max-portions', '1']);
    expectPublished(at8.distributionRatio, 0.273, 3); // published D = 0.273
    expect(0.01 * at8.split[0]!.remaining).toBeCloseTo(0.0065, 4); // published C_aq = 0.0065 M
  });
});

describe('pH advice', () => {
  it.each([
    // f = 1/(1 + 10^(pH − pKa)) for an acid, 1/(1 + 10^(pKa − pH)) for a base (Harvey §7.7; Harris);
    // solved for f = 0.99: pKa ∓ log10(99) = pKa ∓ 1.995635 (computed)
    { args: ['--pka', '5', '--acid'], bound: 'upper', ph: 5 - Math.log10(99), rule: 3 },
    { args: ['--pka', '9.4', '--base'], bound: 'lower', ph: 9.4 + Math.log10(99), rule: 11.4 },
  ])('$args: at least 99 % neutral past pKa ∓ log10 99, rule of thumb 2 units (common practice)', async ({ args, bound, ph, rule }) => {
    const p = await planJson(['--k', '10', ...args, '--sample-volume', '10']);
    expect(p.ph).not.toBeNull();
    expect(p.ph!.bound).toBe(bound);
    expect(p.ph!.ph).toBeCloseTo(ph, 12);
    expect(p.ph!.ruleOfThumbPh).toBeCloseTo(rule, 12);
    expect(p.ph!.ruleOfThumbNeutralFraction).toBeCloseTo(1 / 1.01, 12); // 2 units past: 1/(1 + 10^−2) = 99.01 % (computed)
    expect(p.distributionRatio).toBe(10); // no --ph: D taken as K
    expect(p.notes.join('\n')).toContain('no --ph given');
  });

  it('says to move the pH when the given one leaves less than 99 % neutral', async () => {
    const p = await planJson(['--k', '10', '--pka', '9.4', '--base', '--ph', '10.5', '--sample-volume', '10']);
    expect(p.neutralFraction).toBeCloseTo(1 / (1 + 10 ** -1.1), 12); // computed from the base formula
    expect(p.notes.join('\n')).toMatch(/only 92\.6\d % of the base is neutral: raise the pH to 11\.4 or above/);
  });
});

describe('plan as text', () => {
  it('E3 — Harvey §7.7 laid out as tables, volumes in mL', async () => {
    const r = await plan(['--k', '5', '--sample-volume', '50', '--solvent-volume', '15', '--target', '99.9%', '--max-portions', '3']);
    expect(r.code).toBe(0);
    expect(r.stdout).toContain('target 99.90 % extracted. Volumes in mL.');
    expect(r.stdout).toMatch(/^ {2}1 +15 +60\.00 % +0\.4 +no$/m); // published 60.0 %
    expect(r.stdout).toMatch(/^ {2}3 +5 +70\.37 % +0\.296 +no$/m); // published 70.4 %
    expect(r.stdout).toMatch(/^ {2}1 +9990 +9990$/m); // published 9990 mL
    expect(r.stdout).toContain('Repeating portions of 15 mL: 8 portions (120 mL in all) extract 99.93 %.'); // published 8 × 15 mL
  });

  it('shows the pH bound rounded to the safe side', () => {
    const text = formatPlan(planExtraction({ k: 10, pka: 9.4, acidBase: 'base', sampleVolume: 10, target: 0.99, maxPortions: 2 }));
    expect(text).toContain('at least 99.00 % neutral at or above pH 11.40'); // 11.3956 rounded up for a base
    expect(text).toContain('rule of thumb, 2 pH units above the pKa: pH 11.4 (99.01 % neutral)');
    const acid = formatPlan(planExtraction({ k: 10, pka: 4.2, acidBase: 'acid', sampleVolume: 10, target: 0.99, maxPortions: 2 }));
    expect(acid).toContain('at or below pH 2.20'); // 2.2044 rounded down for an acid
  });

  it('--help names the volume unit', async () => {
    const r = await plan(['--help']);
    expect(r.error?.exitCode).toBe(0);
    expect(r.stdout).toContain('--sample-volume <mL>');
    expect(r.stdout).toContain('(volumes in mL)');
  });
});

describe('plan refuses bad input', () => {
  it.each([
    { args: ['--sample-volume', '10'], message: 'phasebook: expected one of --k or --log-k, the partition coefficient of the neutral form' },
    { args: ['--k', '3', '--pka', '4', '--sample-volume', '10'], message: 'phasebook: expected --acid or --base with --pka' },
    { args: ['--k', '3', '--acid', '--sample-volume', '10'], message: 'phasebook: expected --pka with --acid or --base' },
    { args: ['--k', '3', '--sample-volume', '10', '--max-portions', '0'], message: 'phasebook: expected --max-portions as a whole number from 1 to 100, got "0"' },
  ])('$args → exit 2: $message', async ({ args, message }) => {
    const r = await plan(args);
    expect(r.code).toBe(2);
    expect(r.stderr.trim()).toBe(message);
    expect(r.stdout).toBe('');
  });

  it.each([
    { args: ['--k', '3', '--log-k', '1', '--sample-volume', '10'], message: "option '--k <K>' cannot be used with option '--log-k <logK>'" },
    { args: ['--k', '3', '--sample-volume', '10', '--target', '1.5'], message: 'expected a fraction above 0 and below 1 such as 0.99, or a percentage such as 99.9%, got "1.5"' },
    // Range checks happen where the option is read, so the message names the option.
    { args: ['--k', 'three', '--sample-volume', '10'], message: `option '--k <K>' argument 'three' is invalid. expected a partition coefficient above 0, got "three"` },
    { args: ['--k', '0', '--sample-volume', '10'], message: `option '--k <K>' argument '0' is invalid. expected a partition coefficient above 0, got "0"` },
    { args: ['--k', '3', '--sample-volume', '0'], message: `option '--sample-volume <mL>' argument '0' is invalid. expected a volume in mL above 0, got "0"` },
    { args: ['--k', '3', '--sample-volume', '10', '--solvent-volume', '-1'], message: `option '--solvent-volume <mL>' argument '-1' is invalid. expected a volume in mL above 0, got "-1"` },
    { args: ['--k', '3', '--pka', '4', '--acid', '--ph', '15', '--sample-volume', '10'], message: `option '--ph <pH>' argument '15' is invalid. expected a pH from 0 to 14, got "15"` },
    { args: ['--k', '3'], message: "required option '--sample-volume <mL>' not specified" },
    { args: ['--k', '3', '--acid', '--base', '--pka', '5', '--sample-volume', '1'], message: "option '--acid' cannot be used with option '--base'" },
  ])('$args → usage error: $message', async ({ args, message }) => {
    const r = await plan(args);
    expect(r.error).toBeInstanceOf(CommanderError);
    expect(r.stderr).toContain(message);
  });

  it('the planning function itself throws a usage StopError', () => {
    expect(() => planExtraction({ k: 3, sampleVolume: 10, target: 0.99, maxPortions: 2.5 })).toThrow(StopError);
  });
});

describe('plan with a target figure (issue 16, point 4)', () => {
  it.each([
    [['--target-u', '10', '--sample-volume', '1000'], '--target-u: no plan for a target expanded uncertainty: the Nordtest route (TR 537) measures the uncertainty a procedure gives'],
    [['--target-mdl', '0.01', '--sample-volume', '1000'], '--target-mdl: expected --history FILE and --analyte NAME with it'],
    [['--target-mdl', '0.01', '--sample-volume', '1000', '--k', '3', '--history', 'h.db', '--analyte', 'A'], '--target-mdl plans the sample volume from the QC history: expected no extraction options with it, got --k'],
    [['--target-mdl', '0.01', '--sample-volume', '1000', '--solvent-volume', '60', '--history', 'h.db', '--analyte', 'A'], 'expected no extraction options with it, got --solvent-volume'],
    [['--k', '3', '--sample-volume', '100', '--history', 'h.db'], '--history belongs to --target-mdl: expected --target-mdl with it'],
    [['--target-mdl', '0.01', '--sample-volume', '1000', '--history', 'no-such-history.db', '--analyte', 'A'], 'no-such-history.db'],
  ])('refuses %j with the reason', async (args, message) => {
    const r = await plan(args);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(message);
  });

  it('refuses a target MDL of 0 as a usage error naming the option', async () => {
    const r = await plan(['--target-mdl', '0', '--sample-volume', '1000']);
    expect(r.error ?? r.stderr).toBeTruthy();
    expect(String(r.error ?? r.stderr)).toContain('expected a concentration above 0, got "0"');
  });
});
