/**
 * The report's sections as HTML fragments: each a pure function of the
 * gathered answers (and, for the pictures, of the SVG the drawing code made).
 */
import { CAUTION_TEXT, NO_ATMOSPHERIC_CORRECTION_TEXT } from '../../workers/core/defaults.js';
import { MIN_TREND_YEARS } from '../../workers/core/trend/index.js';
import { readRuralDescription } from '../../workers/core/districts/rural-description.js';
import type { ReportData, ReportScene, TrendFields } from './answers.js';
import type { QualityFigures, SourceCount, ThermalQuality } from './quality.js';
import { summarySentences, type SummaryFigures } from './summary.js';
import { count, difference, esc, fixed, percent, probability, temperature, unitSymbol } from './text.js';

/** Pictures of the report (SVG markup), made by the drawing code; null where there is nothing to draw. */
export interface ReportFigures {
  map: string | null;
  /** Districts written on the map as a number (their name did not fit there), in the order of their numbers. */
  mapKey: { label: string; name: string }[];
  /** Legend of the map's colour classes. */
  legend: string | null;
  bars: string | null;
  /** One small chart per district of the small multiples, with the district's name. */
  multiples: { name: string; svg: string }[];
}

export function periodText(d: ReportData): string {
  return d.request.season === 'all' ? String(d.request.year) : `${d.request.season} ${d.request.year} (${d.selection.label})`;
}

/** "160 satellite passes (80 of them from raw thermal readings)": the surface-temperature scenes used. */
function passesText(d: ReportData): string {
  const used = d.scenes.filter((s) => (s.kind === 'lst' || s.kind === 'thermal') && s.state === 'processed');
  const raw = used.filter((s) => s.kind === 'thermal').length;
  return `${count(used.length, 'satellite pass', 'satellite passes')}${raw ? ` (${raw} of them from raw thermal readings)` : ''}`;
}

export function titleBlock(d: ReportData, place: string | null): string {
  const made = d.madeAt.slice(0, 10);
  return `<header class="title">
<p class="kicker">Yearly surface heat report</p>
<h1>${place ? `${esc(place)}: s` : 'S'}urface heat in ${esc(d.request.season === 'all' ? String(d.request.year) : `${d.request.season} ${d.request.year}`)}</h1>
<p class="meta">${d.request.season === 'all' ? 'The whole year' : `Months ${esc(d.selection.label)}`}, compared with ${d.request.baseline.from === d.request.baseline.to ? d.request.baseline.from : `${d.request.baseline.from}–${d.request.baseline.to}`}. Made on ${esc(made)} (UTC) with heatledger ${esc(d.version)} from ${count(d.districts.features.filter((f) => f.properties.role === 'district').length, 'district')} and ${passesText(d)}. Temperatures in ${d.request.units === 'C' ? 'degrees Celsius (°C)' : 'kelvin (K)'}; a difference of 1 K is a difference of 1 °C.</p>
</header>`;
}

export function summarySection(d: ReportData, f: SummaryFigures): string {
  return `<section id="summary">
<h2>In short</h2>
${summarySentences(d, f).map((s) => `<p>${s}</p>`).join('\n')}
<p class="caution"><strong>Read with care.</strong> ${esc(CAUTION_TEXT)}</p>
</section>`;
}

function yearTable(d: ReportData): string {
  const u = d.request.units;
  const rank = new Map(d.rankingNight.rows.map((r) => [r.district, r.rank]));
  const rows = d.districts.features
    .filter((f) => f.properties.role === 'district')
    .sort((a, b) => (rank.get(a.properties.id) ?? 1e9) - (rank.get(b.properties.id) ?? 1e9));
  const body = rows.map((f) => {
    const p = f.properties;
    return `<tr><td class="n">${rank.get(p.id) ?? '–'}</td><td>${esc(p.name)}</td><td class="n">${difference(p.suhi_night_k, u)}</td><td class="n">${difference(p.suhi_day_k, u)}</td>` +
      `<td class="n">${temperature(p.lst_night_k, u)}</td><td class="n">${temperature(p.lst_day_k, u)}</td><td class="n">${p.dates_night ?? 0} / ${p.dates_day ?? 0}</td></tr>`;
  }).join('\n');
  return `<table class="data"><thead><tr><th>Rank at night</th><th>District</th><th>Heat island at night</th><th>Heat island by day</th><th>Surface temperature at night</th><th>Surface temperature by day</th><th>Clear dates night / day</th></tr></thead>
<tbody>${body}</tbody></table>`;
}

export function hottestSection(d: ReportData, figs: ReportFigures): string {
  return `<section id="where" class="page">
<h2>Where it is hottest</h2>
<p>How much warmer each district's surface was than the countryside around the city, on average over the clear nights of ${esc(periodText(d))}. Deeper red is warmer; blue districts were cooler than the countryside.${d.hotspots?.rows.some((r) => r.spot !== 'none') ? ' Thick outlines mark the hot and cold spots described below.' : ''}</p>
${figs.map ? `<figure class="map"><div class="map-drawing">${figs.map}</div>${figs.legend ? `<div class="legend">${figs.legend}</div>` : ''}<figcaption>Night heat island by district, ${esc(periodText(d))} (${unitSymbol(d.request.units)} above the rural reference).${figs.mapKey.length ? ` Numbers on the map: ${figs.mapKey.map((k) => `${esc(k.label)} ${esc(k.name)}`).join(', ')}.` : ''}${d.hotspots?.rows.some((r) => r.spot !== 'none') ? ' Solid thick outline: hot spot; dashed: cold spot.' : ''}</figcaption></figure>` : ''}
${figs.bars ? `<figure class="bars">${figs.bars}<figcaption>Districts ranked by their night heat island, ${esc(periodText(d))}.</figcaption></figure>` : ''}
<h3>Every district this year</h3>
${yearTable(d)}
</section>`;
}

function verdict(t: Pick<TrendFields, 'direction' | 'n'>): string {
  if (t.direction === 'increasing') return 'warming';
  if (t.direction === 'decreasing') return 'cooling';
  if (t.direction === 'none') return 'no clear trend';
  return 'too few years';
}

export function trendSection(d: ReportData, figs: ReportFigures): string {
  const u = d.request.units;
  const rows = [...d.trendsNight.rows].sort((a, b) => (b.slope_per_decade ?? -Infinity) - (a.slope_per_decade ?? -Infinity));
  const body = rows.map((r) => `<tr class="${r.direction === 'increasing' ? 'up' : ''}"><td>${esc(r.name)}</td><td class="n">${difference(r.slope_per_decade, u)}</td>` +
    `<td class="n">${fixed(r.slope_ci_lower_per_decade, 2, true)} to ${fixed(r.slope_ci_upper_per_decade, 2, true)}</td><td class="n">${probability(r.p)}</td><td class="n">${probability(r.q)}</td>` +
    `<td>${verdict(r)}</td><td class="years">${esc(r.years_used)}</td></tr>`).join('\n');
  const multiples = figs.multiples.length
    ? `<div class="multiples">${figs.multiples.map((m) => `<figure>${m.svg}<figcaption>${esc(m.name)}</figcaption></figure>`).join('\n')}</div>
<p class="note">The ${figs.multiples.length} districts hottest at night this year. Each small chart shows one district's yearly night heat island (dots), the trend line fitted through them (Sen slope) and, shaded, the range of slopes the data allow at ${Math.round((1 - d.request.alpha) * 100)} %. ${figs.multiples.length > 1 ? `The ${figs.multiples.length === 2 ? 'two' : figs.multiples.length} charts share one vertical scale, so a steeper line is a faster change and the districts can be compared by eye; the table below gives the rates in figures.` : 'The table below gives the rate in figures.'}</p>`
    : '';
  return `<section id="trend" class="page">
<h2>Is it getting warmer?</h2>
<p>For each district, the yearly night heat island is tested for a steady rise or fall (Mann–Kendall test) and its rate is estimated as the median of all year-to-year slopes (Sen slope), given here per decade. With many districts tested at once some would look significant by chance; the q value allows for that (Benjamini–Hochberg false discovery rate), and a district is called warming or cooling only when q is at most ${d.request.alpha}.</p>
${multiples}
<table class="data"><thead><tr><th>District</th><th>Change per decade</th><th>95 % range (${unitSymbol(u)} per decade)</th><th>p</th><th>q</th><th>Verdict</th><th>Years used</th></tr></thead>
<tbody>${body}</tbody></table>
</section>`;
}

export function hotspotSection(d: ReportData): string {
  const u = d.request.units;
  if (!d.hotspots) {
    return `<section id="hotspots"><h2>Clusters of heat</h2><p>Hot spots could not be computed for ${esc(periodText(d))}: ${esc(d.hotspotsMissing ?? 'no values')}.</p></section>`;
  }
  const h = d.hotspots;
  const spots = h.rows.filter((r) => r.spot !== 'none').sort((a, b) => Math.abs(b.gi_z ?? 0) - Math.abs(a.gi_z ?? 0));
  const list = spots.length
    ? `<table class="data"><thead><tr><th>District</th><th>Kind</th><th>Confidence</th><th>Gi* z</th><th>Night heat island</th></tr></thead><tbody>
${spots.map((r) => `<tr><td>${esc(r.name)}</td><td>${r.spot === 'hot' ? 'hot spot' : 'cold spot'}</td><td class="n">${r.confidence ?? '–'} %</td><td class="n">${fixed(r.gi_z, 2)}</td><td class="n">${difference(r.value, u)}</td></tr>`).join('\n')}
</tbody></table>`
    : '<p>No district stands out as part of a hot or cold cluster at 90 % confidence or more.</p>';
  const chance = spots.length && spots.every((r) => (r.confidence ?? 0) < 99)
    ? `<p class="note">Tested at 90 % confidence, about one district in ten is flagged by chance alone (${fixed(h.rows.length * 0.1, 1)} of these ${h.rows.length} on average, when there are no real clusters): a single year's flag is a prompt to look closer, not a finding.</p>`
    : '';
  const m = h.moran;
  const moran = m === null
    ? 'Whether neighbouring districts are alike could not be measured (too few districts with neighbours, or equal values).'
    : `Neighbouring districts are ${m.p <= 0.05 ? (m.i > m.expected ? 'more alike than chance would make them' : 'less alike than chance would make them') : 'no more alike than chance would make them'} (Moran's I = ${fixed(m.i, 3)}, expected ${fixed(m.expected, 3)} without clustering, p = ${probability(m.p)}).`;
  return `<section id="hotspots">
<h2>Clusters of heat</h2>
<p>A hot spot is a district that is warm together with its neighbours; a cold spot is one whose neighbourhood is cooler than the city as a whole, even if the district itself is warm (Getis–Ord Gi*, neighbours sharing a boundary). ${h.left_out.length ? `Left out for lack of values: ${esc(h.left_out.join(', '))}.` : ''}</p>
${list}
${chance}
<p>${moran}</p>
</section>`;
}

/** "12 from the scene's own metadata file, 2 from the archive's manifest". */
function sourceList(sources: SourceCount[]): string {
  return sources.map((c) => `${c.passes} from ${esc(c.source)}`).join('; ');
}

/**
 * What a flagged pass without atmospheric correction means for the conclusions: its LST is
 * too low, the day–night difference too large and so ATI too small; SUHI, a difference within
 * one scene, loses most but not all of the bias (common practice, no source).
 */
export const UNCORRECTED_MEANING =
  'On these dates the surface temperatures are likely read too low, which pulls the yearly means of that pass (day or night) down a little. ' +
  'The heat island of these dates is affected less, because the countryside in the same scene is read too low as well, but not by exactly the same amount (its surfaces and temperatures differ). ' +
  'The day–night difference of these dates comes out too large, so their thermal inertia (ATI) comes out too small. ' +
  'Conclusions that rest on a few nights should be checked against the corrected passes.';

function thermalPart(d: ReportData, t: ThermalQuality): string {
  const nights = t.uncorrected.filter((u) => u.pass === 'night').length;
  const thisYear = t.uncorrected.filter((u) => u.year === d.request.year);
  const outside = t.uncorrectedOutside
    ? ` The store also holds ${count(t.uncorrectedOutside, 'pass', 'passes')} without atmospheric correction outside ${esc(d.selection.label)}; ${t.uncorrectedOutside === 1 ? 'it is' : 'they are'} shaded in the appendix but not used in this report.`
    : '';
  const flag = t.uncorrected.length === 0
    ? `<p>Every one of them was corrected for the atmosphere.${outside}</p>`
    : `<div class="flag" id="no-atmospheric-correction"><p><strong>Flag: no atmospheric correction</strong> on ${count(t.uncorrected.length, 'pass', 'passes')}${nights === t.uncorrected.length ? ` (all ${nights === 1 ? 'of them at night' : 'at night'})` : ''}` +
      `, ${thisYear.length ? `of which ${thisYear.length} in ${d.request.year} (${esc(thisYear.map((u) => u.date).join(', '))})` : `none of them in ${d.request.year}`}. ` +
      `${esc(capitalised(NO_ATMOSPHERIC_CORRECTION_TEXT))}</p>
<p><strong>What this means:</strong> ${esc(UNCORRECTED_MEANING)} The appendix marks each of these passes.${outside}</p></div>`;
  return `<h3>Passes made from raw thermal readings</h3>
<p>Of the passes used, ${count(t.passes, 'pass', 'passes')} arrived as raw readings of the satellite's thermal band (Level-1 digital numbers) rather than as surface temperature; heatledger turned them into surface temperature when they were read in. How that was done:</p>
<table class="data narrow"><thead><tr><th>How the surface temperature was made</th><th>Passes</th></tr></thead><tbody>
<tr><td>Corrected for the atmosphere (radiative transfer equation inverted with the scene's transmittance and path radiances)</td><td class="n">${t.withAtmosphere}</td></tr>
<tr${t.emissivityOnly ? ' class="thin"' : ''}><td>Emissivity correction only: no atmospheric correction</td><td class="n">${t.emissivityOnly}</td></tr>
</tbody></table>
<p>Rescaling and thermal constants: ${sourceList(t.constants)}. Emissivity of the surface: ${sourceList(t.emissivity)}.</p>
${flag}`;
}

export function qualitySection(d: ReportData, q: QualityFigures): string {
  const thermal = q.thermal !== null;
  const yearRows = q.byYear.map((y) => `<tr><td>${y.year}</td><td class="n">${y.day}</td><td class="n">${y.night}</td><td class="n">${y.crossoverDay + y.crossoverNight}</td>` +
    `${thermal ? `<td class="n">${y.thermal}</td><td class="n">${y.uncorrected}</td>` : ''}<td class="n">${y.notUsed}</td></tr>`).join('\n');
  const cov = q.coverage.map((c) => `<tr class="${d.minDates > (c.datesNight ?? 0) ? 'thin' : ''}"><td>${esc(c.name)}</td><td class="n">${percent(c.validDay)}</td><td class="n">${percent(c.validNight)}</td><td class="n">${c.passesBelow} of ${c.passes}</td><td class="n">${c.datesNight ?? 0} / ${c.datesDay ?? 0}</td></tr>`).join('\n');
  const crossover = q.crossoverShare === null
    ? 'No scene of these years has been used yet.'
    : q.crossoverShare === 0
      ? 'None of the passes used was taken near sunrise or sunset, when built-up and open ground have nearly the same surface temperature and the heat island looks smaller than it is (“crossover” timing).'
      : `Of the passes used, ${percent(q.crossoverShare)} were taken near sunrise or sunset, when built-up and open ground have nearly the same surface temperature and the heat island looks smaller than it is (“crossover” timing). ` +
      (q.crossoverKept
        ? `They were kept${q.crossoverSetting ? ` (run setting ${esc(q.crossoverSetting)})` : ' (the run has no setting that leaves them out)'}.`
        : `They were left out (run setting ${esc(q.crossoverSetting ?? '')}).`);
  const thin = q.thinDistricts.length
    ? `<p>Fewer than ${d.minDates} clear dates in ${d.request.year} (night or day): ${esc(q.thinDistricts.map((c) => c.name).join(', '))}. Their figures for this year rest on very few days and should be read as rough; this year does not count in their trend.</p>`
    : `<p>Every district has at least ${d.minDates} clear dates by night and by day in ${d.request.year}.</p>`;
  const gaps = q.yearsWithoutData.length ? `<p>No values at all for ${esc(q.yearsWithoutData.join(', '))}: trends run over the other years.</p>` : '';
  const notes = q.trendNotes.length
    ? `<p>Trend notes: ${q.trendNotes.map((n) => `${esc(n.name)}: ${esc(n.note)}`).join('; ')}.</p>`
    : '';
  return `<section id="quality" class="page">
<h2>How good is the data?</h2>
<p>Satellites see the ground only through clear sky. Every figure in this report is a mean over the clear days of each season, so a cloudy year rests on fewer days, and years with different weather are not strictly alike.</p>
<h3>Scenes used per year</h3>
<table class="data narrow"><thead><tr><th>Year</th><th>Day passes</th><th>Night passes</th><th>Of them near sunrise or sunset</th>${thermal ? '<th>Of them from raw thermal readings</th><th>Of those without atmospheric correction</th>' : ''}<th>Not usable</th></tr></thead><tbody>${yearRows}</tbody></table>
<p>${crossover}</p>
${q.thermal ? thermalPart(d, q.thermal) : ''}
${q.unreadable ? `<p>${count(q.unreadable, 'file')} could not be read at all and ${q.unreadable === 1 ? 'is' : 'are'} left out; the appendix lists ${q.unreadable === 1 ? 'it' : 'them'} with the state “failed”.</p>` : ''}
<h3>Clear view of each district, ${d.request.year}</h3>
<p>The share of each district's ground the satellite saw clearly (not cloud, not out of range), averaged over the year's passes. A pass that saw less than ${percent(q.minValidFraction)} of a district is not used for that district.</p>
<table class="data"><thead><tr><th>District</th><th>Seen by day</th><th>Seen at night</th><th>Passes below ${percent(q.minValidFraction)}</th><th>Clear dates night / day</th></tr></thead><tbody>${cov}</tbody></table>
${thin}
${gaps}
${notes}
<p><strong>What this means:</strong> differences between districts of a few tenths of a degree, and year-to-year changes of that size, are within what the choice of clear days alone can produce. The trend verdicts already allow for this scatter; single-year rankings do not.</p>
</section>`;
}

/** The caution of the defaults module, one sentence per item. */
function cautionItems(): string {
  return CAUTION_TEXT.split(/(?<=\.)\s+/).map((c) => `<li>${esc(c)}</li>`).join('\n');
}

const capitalised = (text: string) => text.charAt(0).toUpperCase() + text.slice(1);

/** Distance in metres as the reader says it: "2 km" from 1000 m up when whole, else "500 m". */
const distance = (metres: number) => (metres >= 1000 && metres % 100 === 0 ? `${metres / 1000} km` : `${metres} m`);

/**
 * The run's description of the rural reference in plain words. Its files are
 * named as stored in the report's data (file names alone: gather.ts passes the
 * run's parameters through `handedOnParameters`).
 */
export function ruralWords(description: string): string {
  const r = readRuralDescription(description);
  if (r.kind === 'polygons') return `the area drawn in the file ${r.path}`;
  if (r.kind === 'other') return r.text;
  return `the land between ${distance(r.innerMetres)} and ${distance(r.outerMetres)} outside the city's outer edge (all districts taken together)` +
    `${r.waterPath !== null ? `, with the water of ${r.waterPath} cut out` : ''}`;
}

/** A plain number without float noise (up to 4 decimals). */
const plain = (n: number) => String(Number(n.toFixed(4)));

/** Bit positions (0 = lowest) set in a mask, said as a list: "bits 0, 3 and 5". */
function bitList(mask: number): string {
  const bits: number[] = [];
  for (let b = 0; b < 53 && 2 ** b <= mask; b++) if (Math.floor(mask / 2 ** b) % 2 === 1) bits.push(b);
  const list = bits.length > 1 ? `${bits.slice(0, -1).join(', ')} and ${bits[bits.length - 1]}` : String(bits[0]);
  return `${bits.length > 1 ? 'bits' : 'bit'} ${list}`;
}

/** A setting the run recorded that the report has no plain words for: its key and value as recorded. */
function recordedText(v: unknown): string {
  if (v === null || v === undefined) return 'none';
  if (Array.isArray(v)) return v.map(recordedText).join(', ');
  if (typeof v === 'object') return JSON.stringify(v);
  return String(v);
}

/** The settings the report words, in the order it lists them (others follow by key). */
const SETTING_ORDER = ['districtIds', 'ruralReference', 'coverageRule', 'plausibleRangeKelvin', 'qaMaskBits', 'minValidFraction', 'pairingWindowHours', 'albedoWindowDays', 'atiMinDifferenceKelvin'];

/**
 * The run's settings as [what, how it was set] in plain words, for a reader
 * without the command line; a setting the report does not know keeps its
 * recorded key and value.
 */
export function runSettingRows(params: Record<string, unknown>, units: ReportData['request']['units']): [string, string][] {
  const rows: [string, string][] = [];
  const num = (k: string) => (typeof params[k] === 'number' && Number.isFinite(params[k]) ? (params[k] as number) : null);
  const order = (k: string) => (SETTING_ORDER.indexOf(k) + SETTING_ORDER.length + 1) % (SETTING_ORDER.length + 1);
  for (const [k, v] of Object.entries(params).sort(([a], [b]) => order(a) - order(b) || a.localeCompare(b))) {
    switch (k) {
      case 'districtIds':
        rows.push(['Districts', Array.isArray(v) ? `${v.length}, each compared with the rural reference` : recordedText(v)]);
        break;
      case 'ruralReference': {
        const d = v !== null && typeof v === 'object' ? (v as Record<string, unknown>).description : null;
        rows.push(['Rural reference', typeof d === 'string' ? capitalised(ruralWords(d)) : recordedText(v)]);
        break;
      }
      case 'coverageRule':
        rows.push(['Pixels of a district', v === 'fraction' ? 'Counted by the share of each pixel inside the boundary' : 'Those whose centre lies inside the boundary']);
        break;
      case 'plausibleRangeKelvin':
        rows.push(['Readings kept as surface temperature', Array.isArray(v) && v.length === 2 && v.every((x) => typeof x === 'number')
          ? `From ${temperature(v[0] as number, units)} to ${temperature(v[1] as number, units)}; others are left out as faulty`
          : v === null ? 'All readings' : recordedText(v)]);
        break;
      case 'minValidFraction':
        rows.push(['Clear view a pass needs', num(k) !== null ? `At least ${percent(num(k))} of the district` : recordedText(v)]);
        break;
      case 'pairingWindowHours':
        rows.push(['Day and night passes paired', num(k) !== null ? `When at most ${plain(num(k) as number)} hours apart` : recordedText(v)]);
        break;
      case 'albedoWindowDays':
        rows.push(['Ground brightness (albedo) for ATI', num(k) !== null ? `From an albedo scene at most ${plain(num(k) as number)} days from the pass` : recordedText(v)]);
        break;
      case 'atiMinDifferenceKelvin':
        rows.push(['ATI computed', num(k) !== null ? `Only where day and night differ by at least ${plain(num(k) as number)} K` : recordedText(v)]);
        break;
      case 'qaMaskBits':
        rows.push(['Pixels flagged by the data provider', num(k) !== null && (num(k) as number) > 0 && Number.isInteger(num(k))
          ? `Left out when the quality flag has ${bitList(num(k) as number)} set` : 'No quality flags were used']);
        break;
      default:
        rows.push([k, recordedText(v)]);
    }
  }
  return rows;
}

export function methodsSection(d: ReportData): string {
  const p = d.run?.parameters ?? {};
  const rural = p.ruralReference && typeof p.ruralReference === 'object' ? String((p.ruralReference as Record<string, unknown>).description ?? '') : null;
  const rule = p.coverageRule === 'fraction'
    ? 'a pixel counts for a district in proportion to the share of its area inside the district boundary'
    : 'a pixel belongs to a district when its centre lies inside the district boundary';
  const pairing = typeof p.pairingWindowHours === 'number' ? p.pairingWindowHours : null;
  return `<section id="methods" class="page">
<h2>How the figures are made</h2>
<dl class="defs">
<dt>Land-surface temperature (LST)</dt><dd>The temperature of the ground's skin (roofs, roads, grass, water) as a satellite's thermal sensor sees it through clear sky, in kelvin (K) in the data; shown here in ${d.request.units === 'C' ? '°C (K − 273.15)' : 'K'}. It is not the air temperature people feel.</dd>
${d.scenes.some((s) => s.kind === 'thermal' && s.state === 'processed') ? `<dt>Surface temperature from raw thermal readings</dt><dd>Some passes arrive as raw readings of the thermal band (Level-1 digital numbers). They are turned into LST pixel by pixel: reading to radiance with the scene's rescaling factors, the surface's emissivity and, where the scene's atmosphere is known, its transmittance and path radiances taken out by inverting the radiative transfer equation, and radiance to temperature with the band's thermal constants (inverse Planck function). Without the atmosphere only the emissivity is corrected, and the result is flagged (see “How good is the data?”).</dd>\n` : ''}<dt>Surface urban heat island (SUHI)</dt><dd>A district's mean LST minus the mean LST of the rural reference in the same scene, in K (a difference of 1 K equals 1 °C). Day and night are kept apart. The city figure is the mean over the districts weighted by their area; the baseline figure is the mean of the baseline years' city figures.</dd>
<dt>Apparent thermal inertia (ATI)</dt><dd>(1 − albedo) / (day LST − night LST), in 1/K (Price 1977): how strongly a surface resists heating and cooling. Stored for every district; not used in this report's sentences.</dd>
<dt>Rural reference</dt><dd>${rural ? esc(capitalised(ruralWords(rural))) : 'As recorded with the run'}. A different reference (further out, or with other land cover) shifts every SUHI figure by the same amount.</dd>
<dt>Pixel rule</dt><dd>${esc(capitalised(rule))}.</dd>
<dt>Day and night passes</dt><dd>A pass is a day pass when the sun is above the horizon at the scene centre. A night pass is paired with the day pass closest in time${pairing !== null ? ` within ${pairing} hours` : ''}; the pair is dated by the UTC date of the day pass. A pass that saw less than ${percent(typeof p.minValidFraction === 'number' ? p.minValidFraction : null)} of a district gives no value for it.</dd>
<dt>Trend</dt><dd>Mann–Kendall test of the yearly values (Mann 1945; Kendall 1975), Sen slope with its ${Math.round((1 - d.request.alpha) * 100)} % interval (Sen 1968), Benjamini–Hochberg false discovery rate across districts (Benjamini & Hochberg 1995). A year counts when it has at least ${d.minDates} clear dates; a trend needs at least ${MIN_TREND_YEARS} years.</dd>
<dt>Hot spots</dt><dd>Getis–Ord Gi* with binary weights including the district itself (Ord & Getis 1995); Moran's I with row-standardised weights (Moran 1950).</dd>
</dl>
<div class="keep"><h3>Cautions</h3>
<ul class="cautions">
${cautionItems()}
</ul></div>
<p class="note">The settings behind this report and its run are listed at the start of the appendix.</p>
</section>`;
}

/** The appendix's kind of a scene; a thermal scene also says how its LST was made. */
function kindCell(s: ReportScene): string {
  if (s.kind !== 'thermal') return esc(s.kind ?? '–');
  const m = s.thermal?.lst_method;
  return `thermal DN<br><span class="how${m === 'emissivity_only' ? ' flag-mark' : ''}"${s.thermal ? ` title="${esc(s.thermal.how)}"` : ''}>${m === 'rte' ? 'atmosphere corrected' : m === 'emissivity_only' ? 'no atmospheric correction' : 'not converted'}</span>`;
}

export function appendixSection(d: ReportData): string {
  const thermal = d.scenes.some((s) => s.kind === 'thermal');
  const rows = [...d.scenes]
    .sort((a, b) => String(a.acquired_at ?? '').localeCompare(String(b.acquired_at ?? '')) || a.file.localeCompare(b.file))
    .map((s) => `<tr${s.thermal?.lst_method === 'emissivity_only' ? ' class="flagged"' : ''}><td>${esc(s.file)}</td><td class="time">${esc(s.acquired_at ? `${s.acquired_at.slice(0, 10)} ${s.acquired_at.slice(11, 16)}` : '–')}</td><td>${kindCell(s)}</td><td>${esc(s.pass ?? '–')}</td><td>${esc(s.timing_rating ?? '–')}</td><td>${esc(s.state)}</td><td class="hash">${esc(s.content_hash ?? '–')}</td></tr>`)
    .join('\n');
  const p = d.run?.parameters ?? {};
  return `<section id="appendix" class="page">
<h2>Appendix: settings and input scenes</h2>
<div class="settings">
<div><h3>This report</h3>
<table class="data"><tbody>
<tr><td>Software</td><td>heatledger ${esc(d.version)}</td></tr>
<tr><td>Year and season</td><td>${esc(periodText(d))}</td></tr>
<tr><td>Baseline period</td><td>${d.request.baseline.from}–${d.request.baseline.to}</td></tr>
<tr><td>Significance level</td><td>${d.request.alpha}</td></tr>
<tr><td>Results from</td><td>${d.run ? `run ${d.run.id}, ${esc(d.run.state)}${d.run.finishedAt ? ` ${esc(d.run.finishedAt.slice(0, 10))} ${esc(d.run.finishedAt.slice(11, 16))} UTC` : ''} (heatledger ${esc(d.run.softwareVersion)}, ${esc(d.run.mode)})` : 'no run recorded'}</td></tr>
<tr><td>Database</td><td>${esc(d.health.store)}, schema version ${esc(d.health.schema_version)}</td></tr>
</tbody></table></div>
<div><h3>How the data were processed</h3>
<table class="data"><tbody>${runSettingRows(p, d.request.units).map(([what, how]) => `<tr><td>${esc(what)}</td><td>${esc(how)}</td></tr>`).join('\n')}</tbody></table></div>
</div>
<h3>Input scenes</h3>
<p>Every scene file in the store: acquisition time (UTC), kind, pass, timing rating, whether it was used, and its SHA-256 content hash, which identifies the exact file.${thermal ? ' Kind “lst” is a surface-temperature product; “thermal DN” is a raw thermal reading turned into surface temperature here, with or without atmospheric correction (rows without it are shaded; see “How good is the data?”).' : ''}</p>
<table class="data scenes"><thead><tr><th>File</th><th>Acquired, UTC</th><th>Kind</th><th>Pass</th><th>Timing</th><th>State</th><th>SHA-256</th></tr></thead>
<tbody>${rows}</tbody></table>
</section>`;
}
