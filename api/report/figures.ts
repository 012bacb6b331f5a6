/**
 * The report's pictures, drawn by the page's drawing code (api/web/draw/):
 * one drawing code for the page and the report. Values go in the unit the
 * report shows (a SUHI difference is the same number in K and °C).
 */
import {
  colourClasses, drawLegend, drawMap, drawRankedBars, drawSeriesChart, formatValue, SERIES_COLOURS, seriesValueExtent, toDisplay, unitLabel,
  type ChartSeries, type SpotKind,
} from '../web/draw/index.js';
import type { Geometry } from 'geojson';
import type { ReportData } from './answers.js';
import type { ReportFigures } from './sections.js';
import { periodText } from './sections.js';

/** Widths in CSS pixels; the stylesheet scales them to the printed column. */
const FULL_WIDTH = 680;
const MAP_WIDTH = 480;
const SMALL_WIDTH = 240;

export function reportFigures(d: ReportData): ReportFigures {
  const u = d.request.units;
  const unit = unitLabel('suhi_night', u);
  const show = (v: number | null) => toDisplay('suhi_night', v, u);
  const fmt = (v: number | null) => (v === null ? 'no data' : `${formatValue('suhi_night', v)} ${unit}`);
  const districts = d.districts.features.filter((f) => f.properties.role === 'district');
  const classes = colourClasses('diverging', districts.map((f) => show(f.properties.suhi_night_k)), unit);
  const spots: Record<string, SpotKind> = Object.fromEntries((d.hotspots?.rows ?? []).map((r) => [r.district, r.spot]));
  const map = drawMap(
    d.districts.features.map((f) => ({ id: f.id, name: f.properties.name, role: f.properties.role, geometry: (f.geometry ?? null) as Geometry | null, value: show(f.properties.suhi_night_k) })),
    { width: MAP_WIDTH, maxHeight: 430, classes, formatValue: fmt, title: `Night heat island by district, ${periodText(d)}`, spots, idPrefix: 'report-map', fit: 'districts-only', labels: { fontSize: 10 } },
  );
  const legend = drawLegend(classes, { title: `Night heat island, ${unit}`, note: 'below 0: cooler than the countryside', idPrefix: 'report-legend', width: 250, rural: map.ruralInView });
  const bars = drawRankedBars(
    d.rankingNight.rows.map((r) => ({ id: r.district, name: r.name, value: show(r.value) })),
    { width: FULL_WIDTH, classes, formatValue: fmt, title: `Night heat island by district, ${periodText(d)}`, unit },
  );
  const charted = d.series.map((s): { name: string; series: ChartSeries[] } => ({
    name: s.district.name,
    series: [{
      key: 'night', label: 'Night', colour: SERIES_COLOURS.night, marker: 'circle',
      points: s.points.map((p) => ({ year: p.year, value: show(p.value) })),
      trend: { pivot_year: s.trend.pivot_year, pivot_value: show(s.trend.pivot_value), slope_per_year: s.trend.slope_per_year, slope_ci_lower: s.trend.slope_ci_lower, slope_ci_upper: s.trend.slope_ci_upper },
    }],
  }));
  // one vertical scale for all small charts, so equal slopes look equally steep
  const extents = charted.map((c) => seriesValueExtent(c.series)).filter((e): e is [number, number] => e !== null);
  const shared: [number, number] | undefined = extents.length ? [Math.min(...extents.map((e) => e[0])), Math.max(...extents.map((e) => e[1]))] : undefined;
  const multiples = charted.map((c) => ({
    name: c.name,
    svg: drawSeriesChart(c.series, { width: SMALL_WIDTH, height: 170, title: `${c.name}: night heat island by year`, unit, formatValue: fmt, valueRange: shared }).svg,
  }));
  return { map: map.svg, mapKey: map.key.map((k) => ({ label: k.label, name: k.name })), legend: legend.svg, bars: bars.svg, multiples };
}
