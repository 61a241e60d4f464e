import { describe, expect, it } from 'vitest';
import { createProgress, ProgressLine, type ProgressStream } from '../src/progress.js';

/** A terminal stand-in that records what is written. */
function terminal(options: { isTTY?: boolean; columns?: number } = {}): ProgressStream & { out: string[] } {
  const out: string[] = [];
  return { isTTY: options.isTTY ?? true, columns: options.columns ?? 200, out, write: (s: string) => out.push(s) };
}

/** A clock the test moves by hand (milliseconds). */
function clock(start = 0) {
  let t = start;
  return { now: () => t, advance: (ms: number) => (t += ms) };
}

describe('progress line (issue 6: on a terminal, work over a second shows progress)', () => {
  it.each([
    ['output is not a terminal (pipe, file, CI log)', false, false],
    ['--quiet is given', true, true],
  ])('shows nothing when %s', (_why, isTTY, quiet) => {
    const stream = terminal({ isTTY });
    expect(createProgress({ stream, quiet })).toBeUndefined();
  });

  it('is shown on a terminal without --quiet', () => {
    expect(createProgress({ stream: terminal({ isTTY: true }) })).toBeInstanceOf(ProgressLine);
  });

  it('shows nothing during the first second, then rows read with a bar', () => {
    const stream = terminal();
    const c = clock();
    const p = createProgress({ stream, now: c.now, env: {} })!;
    expect(p).toBeInstanceOf(ProgressLine);
    c.advance(500);
    p.update({ stage: 'read', rows: 8192, fraction: 0.2 });
    expect(stream.out).toEqual([]);
    c.advance(600);
    p.update({ stage: 'read', rows: 16384, fraction: 0.4 });
    expect(stream.out).toHaveLength(1);
    const line = stream.out[0]!;
    expect(line.startsWith('\r')).toBe(true);
    expect(line).toContain('rows read 16,384, evaluated 0, written 0');
    // 40 % of the read stage (weight 0.4) = 16 % of the run: 3 of 20 bar cells.
    expect(line).toContain('###-----------------');
    expect(line).toContain('16%');
  });

  it('redraws at most every 100 ms, and the estimate follows the elapsed time', () => {
    const stream = terminal();
    const c = clock();
    const p = createProgress({ stream, now: c.now, env: { NO_COLOR: '1' } })!;
    c.advance(2000);
    p.update({ stage: 'read', rows: 100_000, totalRows: 100_000, fraction: 1 });
    c.advance(50);
    p.update({ stage: 'evaluate', rows: 50_000, totalRows: 100_000 });
    expect(stream.out).toHaveLength(1); // the second came too soon
    c.advance(100);
    p.update({ stage: 'evaluate', rows: 100_000, totalRows: 100_000 });
    expect(stream.out).toHaveLength(2);
    // 65 % done after 2.15 s: about 2.15 × 0.35 / 0.65 = 1.16 s left.
    expect(stream.out[1]).toContain('65%, about 1 s left; rows read 100,000 of 100,000, evaluated 100,000, written 0');
  });

  it.each([
    ['NO_COLOR set', { NO_COLOR: '1' }, false],
    ['NO_COLOR empty (not set, per no-color.org)', { NO_COLOR: '' }, true],
    ['NO_COLOR absent', {}, true],
  ])('colour: %s', (_why, env, coloured) => {
    const stream = terminal();
    const c = clock();
    const p = createProgress({ stream, now: c.now, env })!;
    c.advance(1500);
    p.update({ stage: 'write', rows: 10, totalRows: 20 });
    expect(stream.out[0]!.includes('\u001b[')).toBe(coloured);
  });

  it('never escapes to clear: finish() blanks the line with spaces and returns to its start', () => {
    const stream = terminal({ columns: 60 });
    const c = clock();
    const p = createProgress({ stream, now: c.now, env: { NO_COLOR: '1' } })!;
    c.advance(1500);
    p.update({ stage: 'write', rows: 10, totalRows: 20 });
    const drawn = stream.out[0]!;
    expect(drawn.length - 1).toBeLessThanOrEqual(59); // cut to the terminal width, so it never wraps
    p.finish();
    expect(stream.out[1]).toBe('\r' + ' '.repeat(drawn.length - 1) + '\r');
    p.finish(); // twice is harmless
    expect(stream.out).toHaveLength(2);
  });

  it.each([
    [200, 'phasebook: [########------------] 40%, about 2 s left; rows read 123,456 of 200,000, evaluated 0, written 0'],
    [100, 'phasebook: [########------------] 40%, about 2 s left; rows read 123,456 of 200,000, evaluated 0'],
    [80, 'phasebook: [########------------] 40%, about 2 s left'],
    [40, 'phasebook: [########------------] 40%'],
    [30, '[########------------] 40%'],
    [12, '40%'],
  ])('at %i columns, fits in whole parts, never cut in a word', (columns, line) => {
    const stream = terminal({ columns });
    const c = clock();
    const p = createProgress({ stream, now: c.now, env: { NO_COLOR: '1' } })!;
    c.advance(1500);
    // Reading done (40 % of the whole by the stage weights): 1.5 s so far, so about 2.25 s left.
    p.update({ stage: 'read', rows: 123_456, totalRows: 200_000, fraction: 1 });
    expect(stream.out[0]).toBe('\r' + line);
    expect(line.length).toBeLessThan(columns);
  });

  it('TERM=dumb gets no colour', () => {
    const stream = terminal();
    const c = clock();
    const p = createProgress({ stream, now: c.now, env: { TERM: 'dumb' } })!;
    c.advance(1500);
    p.update({ stage: 'write', rows: 10, totalRows: 20 });
    expect(stream.out[0]!.includes('\u001b[')).toBe(false);
  });

  it('a shorter line overwrites a longer one completely', () => {
    const stream = terminal();
    const c = clock();
    const p = new ProgressLine({ stream, now: c.now, env: { NO_COLOR: '1' }, intervalMs: 0 });
    c.advance(1500);
    p.update({ stage: 'read', rows: 1_000_000, fraction: 0.5 });
    const first = stream.out[0]!;
    // Counts never go back; a report for a stage already passed changes nothing shown but the time.
    p.update({ stage: 'read', rows: 5, fraction: 0.1 });
    expect(stream.out[1]!.length).toBeGreaterThanOrEqual(first.length);
    expect(stream.out[1]).toContain('rows read 1,000,000');
  });
});
