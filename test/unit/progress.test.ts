/**
 * Progress without a terminal: plain lines, one when the work starts, one each
 * time another tenth is done, and the last state at the end; never a bar or a
 * terminal control sequence (a log file or CI keeps them as they are).
 * The expected lines follow from the rule itself (common practice, no source);
 * the time-based lines are switched off (everyMs huge) so nothing depends on timing.
 */
import { mkdtempSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { startProgress } from '../../workers/commands/progress.js';
import { generateArchive } from '../../demo-data/generate.js';

function sink(isTTY?: boolean) {
  const lines: string[] = [];
  let text = '';
  const stream = { isTTY, write(s: string) { text += s; lines.push(...s.split('\n').filter(Boolean)); return true; } };
  return { stream: stream as unknown as NodeJS.WritableStream & { isTTY?: boolean }, lines, text: () => text };
}

describe('progress lines when the stream is not a terminal', () => {
  it('a line at the start, at each tenth and at the end', () => {
    const s = sink(undefined);
    const p = startProgress({ label: 'scenes', total: 25, stream: s.stream, everyMs: 1e12 });
    for (let done = 0; done <= 25; done++) p.update(done, 'failed 0');
    p.stop();
    expect(s.lines.map((l) => Number(/: (\d+)\/25/.exec(l)![1]))).toEqual([0, 3, 5, 8, 10, 13, 15, 18, 20, 23, 25]);
    expect(s.lines[0]).toBe('scenes: 0/25 done (0 %), failed 0');
    expect(s.lines.at(-1)).toBe('scenes: 25/25 done (100 %), failed 0');
    // no carriage returns, cursor or colour codes
    expect(s.text()).not.toMatch(/[\r\u001b]/);
  });

  it('stop prints the last state once when the last update fell between tenths, and a total that grows is followed', () => {
    const s = sink(false);
    const p = startProgress({ label: 'generated scenes', total: 0, stream: s.stream, everyMs: 1e12 });
    p.update(1, '', 40);
    p.update(2, '', 40);
    p.stop();
    p.stop();
    expect(s.lines).toEqual(['generated scenes: 1/40 done (2 %)', 'generated scenes: 2/40 done (5 %)']);
  });
});

describe('demo archive generation reports each scene written', () => {
  it('years × (2 × pairs + 1) scenes, counted up to the total', async () => {
    const dir = mkdtempSync(path.join(tmpdir(), 'heatledger-progress-'));
    try {
      const seen: [number, number][] = [];
      await generateArchive(dir, { years: 2, pairsPerYear: 1, pixelSizeMetres: 1000 }, (written, total) => seen.push([written, total]));
      expect(seen).toEqual([[1, 6], [2, 6], [3, 6], [4, 6], [5, 6], [6, 6]]);
      expect(readdirSync(dir).filter((f) => f.endsWith('.tif'))).toHaveLength(6);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
