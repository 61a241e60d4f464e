import { describe, expect, it } from 'vitest';
import { periodOf } from '../../src/commands/figures.js';
import { StopError } from '../../src/errors.js';

const NOW = new Date('2026-12-04T21:00:00.000Z');

describe('the period figures reads', () => {
  it.each([
    [{}, '2024-12-04T21:00:00.000Z', '2026-12-04T21:00:00.000Z'],
    // A plain date is a whole UTC day: --until to its last millisecond, and 24 months back from there.
    [{ until: '2026-06-30' }, '2024-06-30T23:59:59.999Z', '2026-06-30T23:59:59.999Z'],
    [{ since: '2026-01-01' }, '2026-01-01T00:00:00.000Z', '2026-12-04T21:00:00.000Z'],
    [{ since: '2026-01-01T08:00:00Z', until: '2026-02-01T08:00:00Z' }, '2026-01-01T08:00:00.000Z', '2026-02-01T08:00:00.000Z'],
  ])('%j → %s … %s', (opts, since, until) => {
    expect(periodOf(opts, NOW)).toEqual({ since, until });
  });

  it.each([
    [{ until: '2026-02-30' }, '--until: expected a date such as 2026-01-31 or an ISO 8601 time such as 2026-01-31T12:00:00Z, got "2026-02-30"'],
    [{ since: '1 Jan 2026' }, '--since: expected a date such as 2026-01-31 or an ISO 8601 time such as 2026-01-31T12:00:00Z, got "1 Jan 2026"'],
    [{ since: '2026-06-02', until: '2026-06-01' }, '--since 2026-06-02T00:00:00.000Z is after --until 2026-06-01T23:59:59.999Z: expected a period that starts before it ends'],
  ])('refuses %j', (opts, message) => {
    let err: unknown;
    try {
      periodOf(opts, NOW);
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(StopError);
    expect((err as StopError).message).toBe(message);
  });
});
