/**
 * `heatledger report`: the yearly surface-heat report for a council, as one
 * self-contained HTML file and, on request, a PDF printed from it by the
 * system's headless Chromium.
 */
import { mkdir, writeFile } from 'node:fs/promises';
import { dirname, resolve } from 'node:path';
import { InputError } from '../core/errors.js';
import { yearsWithValuesIn } from '../store/store-summary.js';
import { quoteGiven, YEAR_MAX, YEAR_MIN } from '../core/year.js';
import type { SeasonName } from '../core/trend/index.js';
import { ENV } from '../config.js';
import { VERSION } from '../version.js';
import type { Store } from '../store/interface.js';
import { withStore } from './common.js';

export interface ReportCommandOptions {
  year?: number;
  season: SeasonName;
  baseline?: string;
  units: 'C' | 'K';
  alpha: number;
  out: string;
  pdf?: string;
  place?: string;
  dataDir?: string;
}

/** Years the baseline covers when --baseline is not given: the first three stored years before the report year. */
export const DEFAULT_BASELINE_YEARS = 3;

/** `--baseline` text: "2019-2021" or one year "2019"; decimal digits only, first year not after the last. */
export function parseBaseline(text: string): { from: number; to: number } {
  const m = /^([0-9]{4})(?:-([0-9]{4}))?$/.exec(text.trim());
  const from = m ? Number(m[1]) : NaN;
  const to = m ? Number(m[2] ?? m[1]) : NaN;
  if (!(from >= YEAR_MIN && to <= YEAR_MAX && from <= to)) {
    throw new InputError(`--baseline must be a year range like 2019-2021 (first year not after the last, ${YEAR_MIN}-${YEAR_MAX}) or one year, got ${quoteGiven(text)}`);
  }
  return { from, to };
}

/** Write a file, creating its folder; a path that cannot be written is the user's to fix (InputError naming it). */
async function writeOutput(path: string, content: string | null, option: string): Promise<void> {
  try {
    await mkdir(dirname(resolve(path)), { recursive: true });
    if (content !== null) await writeFile(path, content);
  } catch (e) {
    throw new InputError(`${option}: cannot write ${path} (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`);
  }
}

/** The report's HTML from an open store: the year (default the latest with values), the baseline, the answers gathered. */
export async function buildReportHtml(store: Store, o: Pick<ReportCommandOptions, 'year' | 'season' | 'units' | 'alpha' | 'place'> & { baseline: { from: number; to: number } | null }): Promise<string> {
  const { gatherReportData } = await import('../../api/report/gather.js');
  const { apiAnswers } = await import('../../api/report/in-process.js');
  const { reportFigures } = await import('../../api/report/figures.js');
  const { reportHtml } = await import('../../api/report/document.js');
  const answers = apiAnswers(store);
  const years = yearsWithValuesIn((await answers.health()).years, {});
  const year = o.year ?? Math.max(...years);
  yearsWithValuesIn(years, { from: year, to: year });
  const earlier = years.filter((y) => y < year).sort((a, b) => a - b);
  const baseline = o.baseline ?? (earlier.length ? { from: earlier[0], to: earlier[Math.min(DEFAULT_BASELINE_YEARS, earlier.length) - 1] } : { from: year, to: year });
  const data = await gatherReportData(store, { year, season: o.season, baseline, units: o.units, alpha: o.alpha }, answers, VERSION);
  return reportHtml(data, reportFigures(data), { place: o.place ?? null });
}

/** The footer of every page of the report's PDF (the command's and the demo's). */
const PDF_FOOTER = `heatledger ${VERSION} · surface heat report`;

/** The browser that prints PDFs: $HEATLEDGER_CHROMIUM, else the Debian package's. */
async function chromiumPath(): Promise<string> {
  const { CHROMIUM_PATH } = await import('../../api/report/pdf.js');
  return process.env[ENV.chromium] || CHROMIUM_PATH;
}

export async function runReportCommand(o: ReportCommandOptions): Promise<void> {
  if (!(o.alpha > 0 && o.alpha < 1)) throw new InputError(`--alpha must be between 0 and 1, got ${o.alpha}`);
  const baseline = o.baseline === undefined ? null : parseBaseline(o.baseline);
  const { printPdf, requireChromium } = await import('../../api/report/pdf.js');
  const chromium = await chromiumPath();
  // before any work: a PDF that cannot be printed is known at once
  if (o.pdf) requireChromium(chromium, '--pdf', ENV.chromium);
  if (o.pdf && resolve(o.pdf) === resolve(o.out)) throw new InputError(`--pdf and --out name the same file (${o.out})`);
  await writeOutput(o.out, null, '--out');
  if (o.pdf) await writeOutput(o.pdf, null, '--pdf');
  const html = await withStore(o, (store) => buildReportHtml(store, { ...o, baseline }));
  await writeOutput(o.out, html, '--out');
  process.stdout.write(`Report (HTML): ${resolve(o.out)}\n`);
  if (o.pdf) {
    await printPdf(html, o.pdf, { executablePath: chromium, footer: PDF_FOOTER });
    process.stdout.write(`Report (PDF):  ${resolve(o.pdf)}\n`);
  }
}

/**
 * The demo's report of the latest summer, from its open store, into `outDir`:
 * HTML, and PDF when Chromium is installed. Returns the files written with a
 * line saying what each is.
 */
export async function writeDemoReport(store: Store, outDir: string, o: { place: string; slug: string }): Promise<{ path: string; what: string }[]> {
  const html = await buildReportHtml(store, { season: 'summer', units: 'C', alpha: 0.05, place: o.place, baseline: null });
  const base = resolve(outDir, `${o.slug}-heat-report`);
  await writeOutput(`${base}.html`, html, 'report');
  const written = [{ path: `${base}.html`, what: 'the yearly heat report of the last summer, for a council (open in a browser)' }];
  const chromium = await chromiumPath();
  const { existsSync } = await import('node:fs');
  if (existsSync(chromium)) {
    const { printPdf } = await import('../../api/report/pdf.js');
    await printPdf(html, `${base}.pdf`, { executablePath: chromium, footer: PDF_FOOTER });
    written.push({ path: `${base}.pdf`, what: 'the same report as an A4 PDF' });
  } else {
    const { howToGetChromium } = await import('../../api/report/pdf.js');
    process.stderr.write(`No PDF of the report: ${chromium} is missing; for one, ${howToGetChromium(ENV.chromium)}.\n`);
  }
  return written;
}
