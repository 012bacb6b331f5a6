/**
 * The page's list of the scenes behind a year (api/web/app/scenes.ts, a pure
 * module of the page run here in Node): a night pass made from raw thermal
 * readings says how its temperature was made, and one without atmospheric
 * correction is marked, with the API's sentence on the typical size of that
 * error under the list. The rows are shaped as /api/scenes gives them (their
 * thermal sentences from workers/core/thermal/describe.ts, as the API makes them);
 * the invented values are inputs only. The HTML is read back with plain
 * patterns (its cells and attributes; character references as the HTML
 * standard defines them, common practice, no source).
 */
import { describe, expect, it } from 'vitest';
import type { SceneRow } from '../../api/web/app/api.js';
import { temperatureSource, UNCORRECTED_MARK, yearScenesHtml } from '../../api/web/app/scenes.js';
import { NO_ATMOSPHERIC_CORRECTION_TEXT } from '../../workers/core/defaults.js';
import { describeLstMethod } from '../../workers/core/thermal/describe.js';

const district = 'D07';

function scene(id: number, at: string, pass: 'day' | 'night' | null, kind: SceneRow['kind'], extra: Partial<SceneRow> = {}): SceneRow {
  return {
    id, file: `2024/s${id}.tif`, acquired_at: at, pass, kind, sensor: 'invented-tir', timing_rating: pass === 'night' ? 'predawn' : 'midday', state: 'processed',
    reason: null, warnings: [], lst_method: null, atmospheric_correction: null, thermal_constants_source: null, emissivity_source: null,
    how_lst_was_made: null, atmospheric_correction_note: null, districts: [{ district, valid_fraction: 0.875, missing_reason: null }], ...extra,
  };
}

function thermal(id: number, at: string, method: 'rte' | 'emissivity_only'): SceneRow {
  const d = describeLstMethod({
    lstMethod: method, atmosphericCorrection: method === 'rte', thermalConstantsSource: 'metadata file 2024/t_MTL.txt', emissivitySource: 'constant 0.97 (default)',
    atmosphere: method === 'rte' ? { transmittance: 0.9, upwelling_w_m2_sr_um: 0.5, downwelling_w_m2_sr_um: 0.9 } : null,
  });
  return scene(id, at, 'night', 'thermal', {
    lst_method: d.lstMethod, atmospheric_correction: d.atmosphericCorrection, thermal_constants_source: d.thermalConstantsSource,
    emissivity_source: d.emissivitySource, how_lst_was_made: d.howLstWasMade, atmospheric_correction_note: d.atmosphericCorrectionNote,
  });
}

/** &amp; &lt; &gt; &quot; &#39; / &#NN; back to characters. */
const decode = (s: string) => s.replace(/&#(\d+);/g, (_m, n: string) => String.fromCharCode(Number(n)))
  .replace(/&quot;/g, '"').replace(/&lt;/g, '<').replace(/&gt;/g, '>').replace(/&amp;/g, '&');
const text = (html: string) => decode(html.replace(/<[^>]+>/g, '')).replace(/\s+/g, ' ').trim();
/** The body rows of the scenes table, each as its cells' HTML. */
const bodyRows = (html: string) => [...(/<tbody>([\s\S]*)<\/tbody>/.exec(html)?.[1] ?? '').matchAll(/<tr>([\s\S]*?)<\/tr>/g)]
  .map((m) => [...m[1].matchAll(/<td[^>]*>([\s\S]*?)<\/td>/g)].map((c) => c[1]));

describe('the scenes behind a year', () => {
  const rows = [
    thermal(3, '2024-07-05T22:40:00.000Z', 'emissivity_only'),
    scene(1, '2024-07-04T11:40:00.000Z', 'day', 'lst'),
    thermal(2, '2024-07-04T22:45:00.000Z', 'rte'),
    scene(4, '2024-07-06T10:00:00.000Z', null, 'albedo'),
    scene(5, '2024-07-07T11:40:00.000Z', 'day', 'lst', { districts: [{ district: 'D08', valid_fraction: 1, missing_reason: null }] }),
  ];
  const html = yearScenesHtml(rows, district, 2024);
  const cells = bodyRows(html);

  it('lists the temperature passes over the district in the order they were taken', () => {
    expect(cells.map((c) => text(c[0]))).toEqual(['2024-07-04 11:40', '2024-07-04 22:45', '2024-07-05 22:40']);
    expect(text(html)).toContain('3 scenes of 2024 over this district (1 by day, 2 at night)');
    expect(cells.map((c) => text(c[3]))).toEqual(['88 %', '88 %', '88 %']); // 0.875 to the nearest per cent
  });

  it('says how each pass\'s temperature was made, the full sentence on hover', () => {
    expect(cells.map((c) => text(c[4]))).toEqual([
      'supplied as surface temperature',
      'raw thermal readings, corrected for the atmosphere',
      `raw thermal readings, not corrected for the atmosphere ${UNCORRECTED_MARK}`,
    ]);
    for (const [i, r] of [[1, rows[2]], [2, rows[0]]] as const) {
      const title = /title="([^"]*)"/.exec(cells[i][4])?.[1];
      expect(title === undefined ? undefined : decode(title)).toBe(r.how_lst_was_made);
    }
    expect(cells[0][4]).not.toContain('title=');
  });

  it('marks only the pass without atmospheric correction and gives the size of that error once, under the list', () => {
    expect(cells.map((c) => c[4].includes('class="uncorrected"'))).toEqual([false, false, true]);
    const note = /<p class="small uncorrected-note">([\s\S]*?)<\/p>/.exec(html);
    expect(note).not.toBeNull();
    const said = text(note![1]);
    expect(said.startsWith(UNCORRECTED_MARK)).toBe(true);
    expect(said).toContain(`${NO_ATMOSPHERIC_CORRECTION_TEXT.charAt(0).toUpperCase()}${NO_ATMOSPHERIC_CORRECTION_TEXT.slice(1)}`);
    expect(said).toContain('one pass above');
    // without such a pass there is no mark and no note
    const corrected = yearScenesHtml(rows.filter((r) => r.id !== 3), district, 2024);
    expect(corrected).not.toContain(UNCORRECTED_MARK);
    expect(corrected).not.toContain('uncorrected-note');
  });

  it('names a thermal scene whose temperature was never made, and says when no scene covers the district', () => {
    expect(temperatureSource(scene(9, '2024-07-08T22:00:00.000Z', 'night', 'thermal', { state: 'failed' }))).toEqual({ words: 'raw thermal readings, not converted', uncorrected: false });
    expect(text(yearScenesHtml(rows, 'D99', 2024))).toBe('No scene of this year covers the district.');
  });
});
