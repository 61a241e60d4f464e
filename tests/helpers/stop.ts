import { expect } from 'vitest';
import { StopError } from '../../src/errors.js';

/** The StopError a promise rejects with; fails the test when it resolves or rejects with anything else. */
export async function stopOf(p: Promise<unknown>): Promise<StopError> {
  try {
    await p;
  } catch (err) {
    expect(err).toBeInstanceOf(StopError);
    return err as StopError;
  }
  throw new Error('expected a StopError');
}
