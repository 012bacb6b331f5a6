/**
 * The report as one self-contained HTML document: inline SVG pictures, one
 * inline stylesheet (screen and print, A4 pages with page breaks between the
 * main sections), no script and no reference to any other file or address.
 */
import type { ReportData } from './answers.js';
import { qualityFigures } from './quality.js';
import {
  appendixSection, hotspotSection, hottestSection, methodsSection, periodText, qualitySection, summarySection, titleBlock, trendSection,
  type ReportFigures,
} from './sections.js';
import { summaryFigures } from './summary.js';
import { esc } from './text.js';

export const REPORT_CSS = `
@page { size: A4; margin: 16mm 15mm 18mm 15mm; }
* { box-sizing: border-box; }
body { font: 10.5pt/1.45 "DejaVu Sans", "Liberation Sans", Arial, sans-serif; color: #1d1d1d; margin: 0 auto; max-width: 60rem; padding: 1.5rem; }
@media print { body { padding: 0; max-width: none; } }
header.title { border-bottom: 3px solid #b8471d; margin-bottom: 1rem; padding-bottom: .6rem; }
.kicker { text-transform: uppercase; letter-spacing: .08em; font-size: 8.5pt; color: #7a3517; margin: 0; }
h1 { font-size: 20pt; margin: .2rem 0 .4rem; line-height: 1.2; }
h2 { font-size: 14pt; margin: 1.2rem 0 .5rem; color: #7a3517; border-bottom: 1px solid #e5c9b8; padding-bottom: .15rem; }
h3 { font-size: 11pt; margin: 1rem 0 .35rem; }
h2, h3 { break-after: avoid; }
.keep { break-inside: avoid; }
.settings { display: grid; grid-template-columns: 5fr 7fr; gap: 0 1.2rem; break-inside: avoid; }
.settings > div:first-child td:first-child { white-space: nowrap; }
.settings > div + div td:first-child { width: 38%; }
.settings h3 { margin-top: .7rem; }
.meta, .note, figcaption { color: #555; font-size: 9pt; }
p { margin: .45rem 0; }
data { font-weight: 600; white-space: nowrap; }
.caution { background: #fff4e5; border-left: 4px solid #e08a1e; padding: .5rem .7rem; font-size: 9.5pt; }
section.page { break-before: page; }
figure { margin: .6rem 0; break-inside: avoid; }
figure svg { max-width: 100%; height: auto; }
figure.map { display: flex; flex-wrap: wrap; align-items: flex-end; gap: .3rem 1rem; }
figure.map .map-drawing { flex: 0 1 66%; }
figure.map .legend { flex: 0 1 30%; }
figure.map figcaption { flex: 1 0 100%; }
.multiples { display: grid; grid-template-columns: repeat(3, 1fr); gap: .4rem .8rem; }
.multiples figure { margin: 0; }
.multiples figcaption { text-align: center; color: #1d1d1d; font-size: 9pt; }
table.data { border-collapse: collapse; width: 100%; font-size: 9pt; margin: .4rem 0 .6rem; }
table.data.narrow { width: auto; min-width: 50%; }
table.data th { text-align: left; vertical-align: bottom; border-bottom: 1.5px solid #555; padding: .2rem .35rem; font-weight: 600; }
table.data td { border-bottom: 1px solid #ddd; padding: .18rem .35rem; vertical-align: top; }
table.data td.n { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
table.data tr { break-inside: avoid; }
table.data thead { display: table-header-group; }
tr.up td { background: #fbe9e1; }
td.years { white-space: nowrap; }
tr.thin td { color: #8a5a00; }
.flag { background: #fff4e5; border-left: 4px solid #e08a1e; padding: .35rem .7rem; margin: .5rem 0; break-inside: avoid; }
.flag p { margin: .3rem 0; }
table.scenes tr.flagged td { background: #fff4e5; }
table.scenes .how { color: #555; white-space: nowrap; }
table.scenes .flag-mark { color: #8a3b00; font-weight: 600; }
table.scenes { font-size: 7pt; }
table.scenes td.hash { font-family: "DejaVu Sans Mono", monospace; font-size: 5.6pt; white-space: nowrap; }
table.scenes td.time { white-space: nowrap; }
dl.defs dt { font-weight: 600; margin-top: .45rem; }
dl.defs dd { margin: .1rem 0 0 1rem; }
ul.cautions li { margin: .2rem 0; }
code { font-size: 8.5pt; }
`;

export interface ReportDocumentOptions {
  /** Name of the city or area for the title (optional). */
  place?: string | null;
}

/** The whole report as HTML text. */
export function reportHtml(d: ReportData, figs: ReportFigures, options: ReportDocumentOptions = {}): string {
  const summary = summaryFigures(d);
  const quality = qualityFigures(d);
  const place = options.place ?? null;
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8">
<title>${esc(`${place ? `${place}: ` : ''}surface heat report, ${periodText(d)}`)}</title>
<meta name="generator" content="heatledger ${esc(d.version)}">
<style>${REPORT_CSS}</style>
</head><body>
${titleBlock(d, place)}
${summarySection(d, summary)}
${hottestSection(d, figs)}
${hotspotSection(d)}
${trendSection(d, figs)}
${qualitySection(d, quality)}
${methodsSection(d)}
${appendixSection(d)}
</body></html>
`;
}
