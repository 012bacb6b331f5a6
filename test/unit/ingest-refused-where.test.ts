/**
 * A run that refused files as bad input ends with exit 2 and one line that
 * says where the refused files are listed: above (the summary lines) or in
 * the JSON summary (`ingest --json`) under the keys that hold them. The
 * summaries are run results as the pipeline returns them (inputs of the
 * check); exit 2 for bad input is the project's contract, common practice, no source.
 */
import { describe, expect, it } from 'vitest';
import { summaryJson, throwIfRunFailed } from '../../workers/commands/ingest.js';
import { InputError } from '../../workers/core/errors.js';
import type { PipelineSummary } from '../../workers/run/pipeline.js';

function summary(unreadable: number, failedJobs: number): PipelineSummary {
  return {
    runId: 7, mode: 'embedded', scenes: 5, duplicates: [],
    unreadable: Array.from({ length: unreadable }, (_, i) => ({ path: `/a/bad-${i}.tif`, reason: 'cannot read (EACCES)' })),
    failures: Array.from({ length: failedJobs }, (_, i) => ({ id: `z${i}`, name: 'zonal', error: `InputError: /a/x${i}.tif: not a GeoTIFF`, kind: 'input' as const })),
    derive: null,
    outcome: { status: 'incomplete', scenesLeft: 0, refused: unreadable + failedJobs, derived: true, error: 'files refused' },
    seconds: 1,
  } as PipelineSummary;
}

const message = (s: PipelineSummary, printed?: 'lines' | 'json') => {
  try {
    throwIfRunFailed(s, printed);
  } catch (e) {
    expect(e).toBeInstanceOf(InputError);
    return (e as Error).message;
  }
  throw new Error('no error');
};

describe('where the refused files are listed', () => {
  it('after summary lines: above', () => {
    expect(message(summary(2, 0))).toBe('run 7: 2 path(s) could not be read (listed above and in `heatledger status`); the other scenes are stored');
  });

  it('after --json: the keys of the JSON summary that hold them, which it has', () => {
    for (const [u, f, keys] of [[2, 0, '"unreadable"'], [0, 3, '"failures"'], [1, 1, '"unreadable" and "failures"']] as const) {
      const s = summary(u, f);
      expect(message(s, 'json')).toContain(`(listed under ${keys} in the JSON summary on standard output and in \`heatledger status\`)`);
      expect(message(s, 'json')).not.toContain('above');
      const json = summaryJson(s) as { unreadable: unknown[]; failures: unknown[] };
      expect(json.unreadable).toHaveLength(u);
      expect(json.failures).toHaveLength(f);
    }
  });
});
