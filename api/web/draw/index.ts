/**
 * The drawing code shared by the web page (in the browser) and the yearly
 * report (in Node): pure functions from plain data to SVG strings, with no
 * DOM access and no globals.
 */
export { drawMap, forD3, MAP_INK, SPOT_STYLE, type MapFeature, type MapOptions, type MapLabelOptions, type LabelKeyEntry, type DrawnMap, type SpotKind } from './map.js';
export { drawLegend, type LegendOptions } from './legend.js';
export { drawRankedBars, type BarRow, type BarOptions } from './bars.js';
export { drawSeriesChart, senLineAt, seriesValueExtent, SERIES_COLOURS, type ChartSeries, type SenLine, type SeriesPoint, type SeriesChartOptions } from './series.js';
export { colourClasses, classOf, colourOf, type ColourClasses, type PaletteFamily } from './palette.js';
export { trendSentence, type TrendForSentence } from './sentence.js';
export { METRICS, METRIC_NAMES, KELVIN_AT_ZERO_CELSIUS, isMetricName, unitLabel, toDisplay, formatValue, type MetricName, type MetricInfo, type TemperatureUnit } from './metrics.js';
export { esc, formatNumber } from './svg.js';
