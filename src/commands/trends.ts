/**
 * `phasebook trends --history FILE [--analyte A] [--json]`: per analyte and
 * control type, n, mean, SD, the in-house warning and control limits and the
 * Westgard rule violations, from a QC history written by `recalc --history`.
 * Reads the history only; never writes to it.
 */
import type { Command } from 'commander';
import { StopError } from '../errors.js';
import { EXIT, type CommandIo } from './io.js';
import { MIN_POINTS, readTrends, trendsJson, type TrendSeries } from '../history/trends.js';

interface TrendsCliOptions {
  history: string;
  analyte?: string;
  json?: boolean;
}

export function registerTrendsCommand(program: Command, io: CommandIo): void {
  program
    .command('trends')
    .description('show in-house control limits and Westgard rule violations from a QC history')
    .requiredOption('--history <file>', 'QC history file written by "recalc --history"')
    .option('--analyte <name>', 'only this analyte (case does not matter)')
    .option('--json', 'print a JSON array instead of text')
    .action(async (opts: TrendsCliOptions) => {
      const out = io.stdout ?? ((text: string) => void process.stdout.write(text));
      out(await runTrends(opts));
      io.exit(EXIT.ok);
    });
}

async function runTrends(opts: TrendsCliOptions): Promise<string> {
  let series = await readTrends(opts.history);
  if (opts.analyte !== undefined) {
    const wanted = opts.analyte.trim().toLowerCase();
    const known = [...new Set(series.map((s) => s.analyte))];
    series = series.filter((s) => s.analyte.toLowerCase() === wanted);
    if (series.length === 0) {
      throw new StopError(
        'usage',
        `no control recoveries of analyte "${opts.analyte}" in the history; it holds ${known.length ? known.map((a) => `"${a}"`).join(', ') : 'none'}`,
        { file: opts.history },
      );
    }
  }
  if (opts.json) return JSON.stringify(trendsJson(series), null, 2) + '\n';
  if (series.length === 0) return 'The history holds no control recoveries yet.\n';
  return series.map(describeSeries).join('\n');
}

function describeSeries(s: TrendSeries): string {
  const l = s.limits;
  const level = s.level ? ` level ${s.level}` : '';
  const lines = [`${s.analyte}, ${s.sampleType || '(no sample type)'}${level}: n ${l.n}, mean ${pct(l.mean)}, SD ${pct(l.sd)}`];
  if (!l.sufficient) {
    lines.push(`  no in-house limits yet: ${MIN_POINTS} recoveries needed, ${l.n} recorded`);
  } else {
    lines.push(`  warning limits ${pct(l.warningLow)} to ${pct(l.warningHigh)} (mean ± 2s)`);
    lines.push(`  control limits ${pct(l.controlLow)} to ${pct(l.controlHigh)} (mean ± 3s)`);
    if (s.violations.length === 0) lines.push('  Westgard rules: none broken');
    else {
      lines.push('  Westgard rules:');
      for (const v of s.violations) {
        const p = s.points[v.index]!;
        const where = `run ${p.runId} (${p.worklistName}, ${p.runTime}), batch "${v.batchId}", sample "${p.sampleId}"${s.level ? `, level ${s.level}` : ''}`;
        lines.push(`    ${v.rule}${v.severity === 'warning' ? ' (warning)' : ''} at ${where}, recovery ${pct(v.value)}`);
      }
    }
  }
  return lines.join('\n') + '\n';
}

function pct(x: number): string {
  return Number.isFinite(x) ? `${x.toFixed(2)} %` : 'n/a';
}
