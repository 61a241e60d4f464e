import { describe, expect, it } from 'vitest';
import { formatBytes, significant } from '../src/format.js';

// Rounding to significant figures as ECMA-262 Number.prototype.toPrecision defines it.
describe('numbers for people to read', () => {
  it.each([
    [130.04, 6, '130.04'],
    [130.0000000003, 6, '130'],
    [98.40123, 4, '98.4'],
    [0.00012346, 4, '0.0001235'],
    [0.000012346, 4, '1.235e-5'],
    [2.5e9, 3, '2.5e+9'],
    [0, 4, '0'],
    [-0.5, 4, '-0.5'],
    [NaN, 4, 'NaN'],
    [Infinity, 4, 'Infinity'],
  ])('%s to %i figures is %s', (x, digits, want) => {
    expect(significant(x, digits)).toBe(want);
  });
});

describe('formatBytes', () => {
  it.each([
    [512, '512 bytes'],
    [1536, '1.5 KiB'],
    [2000, '2 KiB'],
    [512 * 1024 * 1024, '512 MiB'],
    [3 * 1024 * 1024 * 1024, '3 GiB'],
  ])('%d → %s', (n, text) => {
    // IEC binary prefixes (KiB = 1024 bytes): IEC 80000-13.
    expect(formatBytes(n)).toBe(text);
  });
});
