/**
 * Competition ranks ("1224") checked against SciPy's scipy.stats.rankdata(method='min')
 * (Debian python3-scipy) on seeded values with many ties; rank change by hand.
 */
import { spawnSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { rankChange, rankValues } from '../../workers/core/ranking.js';
import { mulberry32 } from '../../workers/core/prng.js';
import { pythonModulesAvailable } from '../support/services.js';

const PYTHON = '/usr/bin/python3';
const HAVE_SCIPY = await pythonModulesAvailable(['scipy.stats'], 'ranking against SciPy');

describe('rankValues', () => {
  it.skipIf(!HAVE_SCIPY)('equals scipy.stats.rankdata(method="min") of -x (desc) and x (asc), ties included', () => {
    const rand = mulberry32(4242);
    const sets = Array.from({ length: 12 }, (_, i) => Array.from({ length: 5 + i * 7 }, () => Math.round(rand() * (3 + i)) / 2));
    const code = 'import json, sys\nfrom scipy import stats\nsets = json.load(sys.stdin)\nprint(json.dumps([[[int(r) for r in stats.rankdata([-v for v in s], method="min")], [int(r) for r in stats.rankdata(s, method="min")]] for s in sets]))';
    const r = spawnSync(PYTHON, ['-c', code], { input: JSON.stringify(sets), encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(0);
    const ref = JSON.parse(r.stdout) as [number[], number[]][];
    sets.forEach((values, i) => {
      for (const [k, order] of (['desc', 'asc'] as const).entries()) {
        const ranked = rankValues(values.map((value, key) => ({ key, value })), order, (a, b) => a - b);
        const byKey = new Map(ranked.map((x) => [x.key, x.rank]));
        expect(values.map((_, key) => byKey.get(key)), `${i} ${order}`).toEqual(ref[i][k]);
        // listed best first, ties in key order
        for (let j = 1; j < ranked.length; j++) expect(ranked[j].rank >= ranked[j - 1].rank).toBe(true);
      }
    });
  });
  it('leaves out null and non-finite values, and ranks the rest', () => {
    const r = rankValues([{ key: 'a', value: null }, { key: 'b', value: 2 }, { key: 'c', value: Number.NaN }, { key: 'd', value: 5 }], 'desc');
    expect(r).toEqual([{ key: 'd', value: 5, rank: 1 }, { key: 'b', value: 2, rank: 2 }]);
  });
  it('rank change is previous minus current (moving from 4th to 1st is +3), null when either is missing', () => {
    expect(rankChange(4, 1)).toBe(3);
    expect(rankChange(1, 3)).toBe(-2);
    expect(rankChange(null, 2)).toBeNull();
  });
});
