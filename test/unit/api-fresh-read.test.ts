/**
 * freshRead (api/cache.ts): every caller gets a value read after its call, and
 * callers that arrive while a read is in flight share the next one. Reads are
 * released by hand (no timing): read k returns k.
 */
import { describe, expect, it } from 'vitest';
import { freshRead } from '../../api/cache.js';

function gatedReads() {
  const gates: (() => void)[] = [];
  let started = 0;
  const read = () => {
    const k = ++started;
    return new Promise<number>((resolve) => gates.push(() => resolve(k)));
  };
  return { read, release: (i: number) => gates[i](), started: () => started };
}

const settle = () => new Promise((r) => setImmediate(r));

describe('freshRead', () => {
  it('gives a caller who arrives during a read the next read, shared with the others who arrive before it starts', async () => {
    const g = gatedReads();
    const get = freshRead(g.read);
    const a = get(); // read 1 starts
    const b = get(); // arrives while read 1 runs: waits for read 2
    const c = get(); // the same
    expect(g.started()).toBe(1);
    g.release(0);
    expect(await a).toBe(1);
    await settle();
    expect(g.started()).toBe(2); // read 2 started after read 1 ended, for b and c together
    const d = get(); // arrives while read 2 runs: read 3
    g.release(1);
    expect([await b, await c]).toEqual([2, 2]);
    await settle();
    g.release(2);
    expect(await d).toBe(3);
    expect(g.started()).toBe(3);
  });
  it('starts a new read for a caller when none is running, and after a failed read', async () => {
    let n = 0;
    const get = freshRead(async () => { n++; if (n === 1) throw new Error('store away'); return n; });
    await expect(get()).rejects.toThrow('store away');
    expect(await get()).toBe(2);
    expect(await get()).toBe(3);
  });
});
