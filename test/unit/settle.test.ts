/**
 * Bounded waits (core/settle.ts): a promise that settles, either way, is reported
 * as settled; one that never does is given up on. No assertion on how long
 * anything took.
 */
import { describe, expect, it } from 'vitest';
import { settleWithin } from '../../workers/core/settle.js';

describe('settleWithin', () => {
  it('is true for a promise that resolves or rejects in time', async () => {
    expect(await settleWithin(Promise.resolve('done'), 60_000)).toBe(true);
    expect(await settleWithin(Promise.reject(new Error('closed')), 60_000)).toBe(true);
  });

  it('is false for a promise that never settles', async () => {
    expect(await settleWithin(new Promise(() => undefined), 5)).toBe(false);
  });
});
