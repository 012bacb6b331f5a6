/**
 * Printing the HTML report to PDF with the system's headless Chromium (the
 * Debian package `chromium`), driven by playwright-core. No browser is ever
 * downloaded: a machine without Chromium gets a message naming the package.
 */
import { existsSync } from 'node:fs';
import { InputError } from '../../workers/core/errors.js';
import { esc } from './text.js';

/** Where Debian's `chromium` package puts the browser. */
export const CHROMIUM_PATH = '/usr/bin/chromium';

/** Switches for a headless browser that opens no connection of its own. */
export const CHROMIUM_ARGS = [
  '--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run',
  '--disable-background-networking', '--disable-component-update', '--disable-sync',
] as const;

/**
 * Throws the InputError that tells how to get Chromium when `executable` is missing: the Debian
 * package, or `variable` (the environment variable naming another browser), when the caller reads one.
 */
export function requireChromium(executable: string, what: string, variable?: string): void {
  if (existsSync(executable)) return;
  throw new InputError(`${what} needs the headless browser Chromium, and ${executable} does not exist: ${howToGetChromium(variable)}`);
}

/** What to do when there is no Chromium: install the Debian package, or name another browser in `variable`. */
export function howToGetChromium(variable?: string): string {
  return `install the Debian package "chromium" (apt-get install chromium)${variable ? `, or set ${variable} to the path of a Chromium you have` : ''}`;
}

export interface PrintOptions {
  /** Browser to use; default the Debian package's. */
  executablePath?: string;
  /** Text at the foot of every page, left of the page number. */
  footer?: string;
}

/**
 * Print `html` to an A4 PDF at `pdfPath`. Every request the page would make
 * is refused, so the PDF shows exactly what the self-contained file holds.
 */
export async function printPdf(html: string, pdfPath: string, options: PrintOptions = {}): Promise<void> {
  const executablePath = options.executablePath ?? CHROMIUM_PATH;
  requireChromium(executablePath, '--pdf');
  const { chromium } = await import('playwright-core');
  const browser = await chromium.launch({ executablePath, args: [...CHROMIUM_ARGS] });
  try {
    const page = await browser.newPage();
    await page.route('**/*', (route) => route.abort());
    await page.setContent(html, { waitUntil: 'load' });
    await page.pdf({
      path: pdfPath,
      format: 'A4',
      printBackground: true,
      preferCSSPageSize: true,
      displayHeaderFooter: true,
      headerTemplate: '<span></span>',
      footerTemplate: `<div style="font-size:7pt;color:#666;width:100%;padding:0 15mm;display:flex;justify-content:space-between"><span>${esc(options.footer ?? '')}</span><span>page <span class="pageNumber"></span> of <span class="totalPages"></span></span></div>`,
    });
  } finally {
    await browser.close();
  }
}
