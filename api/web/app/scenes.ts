/**
 * The scenes behind a year of the selected district (the district panel's
 * "scenes" list): when each was taken, its pass and timing, the clear part of
 * the district, its state, and how its surface temperature was made. A night
 * pass made from raw thermal-band readings says whether it was corrected for
 * the atmosphere; one that was not is marked, with the API's sentence on the
 * typical size of that error under the list. Builds HTML text; no DOM access here.
 */
import { esc } from '../draw/svg.js';
import type { SceneRow } from './api.js';

/** The mark beside a pass made without atmospheric correction, and before its footnote. */
export const UNCORRECTED_MARK = '†';

/** A few words on how the scene's surface temperature was made; `uncorrected` when the atmosphere was left out. */
export function temperatureSource(s: SceneRow): { words: string; uncorrected: boolean } {
  if (s.kind !== 'thermal') return { words: s.kind === 'lst' ? 'supplied as surface temperature' : '–', uncorrected: false };
  if (s.lst_method === null) return { words: 'raw thermal readings, not converted', uncorrected: false };
  if (s.atmospheric_correction) return { words: 'raw thermal readings, corrected for the atmosphere', uncorrected: false };
  return { words: 'raw thermal readings, not corrected for the atmosphere', uncorrected: true };
}

const pct = (v: number | null) => (v === null ? '–' : `${Math.round(v * 100)} %`);

/** First letter upper case (the API's note starts a sentence here). */
const sentence = (t: string) => `${t.charAt(0).toUpperCase()}${t.slice(1)}`;

/**
 * The list of a year's temperature passes over `district` (scenes with a day or
 * night pass that hold a row for it), in the order they were taken.
 */
export function yearScenesHtml(rows: readonly SceneRow[], district: string, year: number): string {
  const scenes = rows
    .filter((s) => s.pass === 'day' || s.pass === 'night') // temperature scenes; albedo scenes have no pass
    .map((s) => ({ s, d: s.districts.find((x) => x.district === district) }))
    .filter((x): x is { s: SceneRow; d: SceneRow['districts'][number] } => x.d !== undefined)
    .sort((a, b) => String(a.s.acquired_at).localeCompare(String(b.s.acquired_at)));
  if (scenes.length === 0) return '<span class="muted">No scene of this year covers the district.</span>';
  const day = scenes.filter((x) => x.s.pass === 'day').length;
  const night = scenes.filter((x) => x.s.pass === 'night').length;
  const uncorrected = scenes.filter((x) => temperatureSource(x.s).uncorrected);
  const body = scenes.map(({ s, d }) => {
    const how = temperatureSource(s);
    const title = s.how_lst_was_made ? ` title="${esc(s.how_lst_was_made)}"` : '';
    const made = how.uncorrected
      ? `<span class="uncorrected"${title}>${esc(how.words)} ${UNCORRECTED_MARK}</span>`
      : `<span${title}>${esc(how.words)}</span>`;
    return `<tr><td>${esc((s.acquired_at ?? '').replace('T', ' ').slice(0, 16))}</td><td>${esc(s.pass ?? '–')}</td><td>${esc(s.timing_rating ?? '–')}</td>`
      + `<td class="num">${pct(d.valid_fraction)}${d.missing_reason ? ` <span class="muted reason">(${esc(d.missing_reason)})</span>` : ''}</td>`
      + `<td>${made}</td><td>${esc(s.state)}</td></tr>`;
  }).join('\n');
  // one footnote for every pass without atmospheric correction: the API's sentence on the size of the error
  const n = uncorrected.length;
  const note = n === 0 ? '' : `<p class="small uncorrected-note">${UNCORRECTED_MARK} ${esc(sentence(uncorrected[0].s.atmospheric_correction_note ?? 'no atmospheric correction: its temperatures are likely too low.'))} This applies to ${n === 1 ? 'one pass' : `${n} passes`} above.</p>`;
  return `<p class="small">${scenes.length} scene${scenes.length === 1 ? '' : 's'} of ${year} over this district (${day} by day, ${night} at night), all seasons:</p>
<div class="table-wrap"><table class="scenes"><thead><tr><th scope="col">Taken (UTC)</th><th scope="col">Pass</th><th scope="col">Timing</th><th scope="col" class="num">Clear part of district</th><th scope="col">Temperature from</th><th scope="col">State</th></tr></thead><tbody>
${body}
</tbody></table></div>${note}`;
}
