/**
 * `heatledger report`: the yearly surface-heat report for a council, as one
 * self-contained HTML file and, on request, a PDF printed from it by the
 * system's headless Chromium.
 */
import { mkdir, writeFile } from 'node:fs/promises';
import { dirname, resolve } from 'node:path';
import { InputError } from '../core/errors.js';
import { quoteGiven, YEAR_MAX, YEAR_MIN } from '../core/year.js';
import type { SeasonName } from '../core/trend/index.js';
import { ENV } from '../config.js';
import { VERSION } from '../version.js';
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

export async function runReportCommand(o: ReportCommandOptions): Promise<void> {
  if (!(o.alpha > 0 && o.alpha < 1)) throw new InputError(`--alpha must be between 0 and 1, got ${o.alpha}`);
  const asked = o.baseline === undefined ? null : parseBaseline(o.baseline);
  const { CHROMIUM_PATH, printPdf, requireChromium } = await import('../../api/report/pdf.js');
  const chromium = process.env[ENV.chromium] || CHROMIUM_PATH;
  // before any work: a PDF that cannot be printed is known at once
  if (o.pdf) requireChromium(chromium, '--pdf');
  if (o.pdf && resolve(o.pdf) === resolve(o.out)) throw new InputError(`--pdf and --out name the same file (${o.out})`);
  await writeOutput(o.out, null, '--out');
  if (o.pdf) await writeOutput(o.pdf, null, '--pdf');

  const { gatherReportData } = await import('../../api/report/gather.js');
  const { apiAnswers } = await import('../../api/report/in-process.js');
  const { reportFigures } = await import('../../api/report/figures.js');
  const { reportHtml } = await import('../../api/report/document.js');
  const html = await withStore(o, async (store) => {
    const answers = apiAnswers(store);
    const years = (await answers.health()).years;
    if (years.length === 0) throw new InputError('the store holds no district values yet: run `heatledger ingest` first');
    const year = o.year ?? Math.max(...years);
    if (!years.includes(year)) throw new InputError(`--year ${year}: the store has no district values for it (years with values: ${years.join(', ')})`);
    const earlier = years.filter((y) => y < year).sort((a, b) => a - b);
    const baseline = asked ?? (earlier.length ? { from: earlier[0], to: earlier[Math.min(DEFAULT_BASELINE_YEARS, earlier.length) - 1] } : { from: year, to: year });
    const data = await gatherReportData(store, { year, season: o.season, baseline, units: o.units, alpha: o.alpha }, answers, VERSION);
    return reportHtml(data, reportFigures(data), { place: o.place ?? null });
  });
  await writeOutput(o.out, html, '--out');
  process.stdout.write(`Report (HTML): ${resolve(o.out)}\n`);
  if (o.pdf) {
    await printPdf(html, o.pdf, { executablePath: chromium, footer: `heatledger ${VERSION} · surface heat report` });
    process.stdout.write(`Report (PDF):  ${resolve(o.pdf)}\n`);
  }
}

/** Folder in the working directory where the demo leaves what a user takes away. */
export const DEMO_OUTPUT_DIR = 'heatledger-output';

/**
 * The demo's report: the latest summer, written into `heatledger-output/` in
 * the working directory (HTML, and PDF when Chromium is installed); prints the
 * paths it wrote.
 */
export async function writeDemoReport(o: { dataDir?: string; place: string; slug: string }): Promise<void> {
  const { CHROMIUM_PATH } = await import('../../api/report/pdf.js');
  const { existsSync } = await import('node:fs');
  const chromium = process.env[ENV.chromium] || CHROMIUM_PATH;
  const base = resolve(DEMO_OUTPUT_DIR, `${o.slug}-heat-report`);
  const pdf = existsSync(chromium) ? `${base}.pdf` : undefined;
  await runReportCommand({ season: 'summer', units: 'C', alpha: 0.05, place: o.place, out: `${base}.html`, pdf, dataDir: o.dataDir });
  if (!pdf) process.stdout.write(`(No PDF: ${chromium} is missing; install the Debian package "chromium" for one.)\n`);
}
