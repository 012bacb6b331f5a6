/**
 * The defaults the built CLI prints in its --help (ingest, zonal, serve, trend, hotspots, export) are
 * the ones in workers/core/defaults.ts, so the help never says one thing while
 * a run does another. The CLI is run as a user runs it (dist/workers/cli.js,
 * built first); its help text is commander's "(default: ...)" form (common
 * practice, no source).
 */
import { beforeAll, describe, expect, it } from 'vitest';
import * as defaults from '../../workers/core/defaults.js';
import { cleanEnv, ensurePipelineBuild, runCli } from '../support/pipeline-harness.js';

/** The help's option entries: "--name <arg>" → its whole description (wrapped lines joined). */
function optionEntries(help: string): Map<string, string> {
  const entries = new Map<string, string>();
  let current: string | null = null;
  for (const line of help.split('\n')) {
    const start = /^ {2}(?:-\w, )?(--[a-z][a-z-]*)(?: <[^>]+>)?\s*(.*)$/.exec(line);
    if (start) {
      current = start[1];
      entries.set(current, start[2]);
    } else if (current && /^ {3,}\S/.test(line)) {
      entries.set(current, `${entries.get(current)} ${line.trim()}`);
    } else {
      current = null;
    }
  }
  return entries;
}

/** The text after "default:" of an option, up to its closing bracket or the next field. */
function printedDefault(entries: Map<string, string>, option: string): string {
  const text = entries.get(option);
  if (text === undefined) throw new Error(`the help has no ${option}`);
  const m = /default: ([^,)]+(?:,[0-9][^,)]*)?)/.exec(text);
  if (!m) throw new Error(`the help of ${option} prints no default: ${text}`);
  return m[1].trim();
}

const helps: Record<string, Map<string, string>> = {};

beforeAll(async () => {
  await ensurePipelineBuild();
  for (const command of ['ingest', 'zonal', 'serve', 'trend', 'hotspots', 'export']) {
    const r = await runCli([command, '--help'], cleanEnv(), 120_000);
    expect(r.code, r.stderr).toBe(0);
    helps[command] = optionEntries(r.stdout);
  }
}, 900_000);

describe('defaults printed by --help', () => {
  const plausible = `"${defaults.PLAUSIBLE_RANGE_KELVIN.join(',')}"`;

  it('ingest', () => {
    const h = helps.ingest;
    expect(printedDefault(h, '--rural-inner')).toBe(String(defaults.RURAL_RING_INNER_METRES));
    expect(printedDefault(h, '--rural-outer')).toBe(String(defaults.RURAL_RING_OUTER_METRES));
    expect(printedDefault(h, '--plausible')).toBe(plausible);
    expect(printedDefault(h, '--min-valid-fraction')).toBe(String(defaults.MIN_VALID_FRACTION));
    expect(printedDefault(h, '--pairing-window')).toBe(String(defaults.PAIRING_WINDOW_HOURS));
    expect(printedDefault(h, '--albedo-window')).toBe(String(defaults.ALBEDO_WINDOW_DAYS));
    expect(printedDefault(h, '--data-dir')).toBe(`"${defaults.DATA_DIR_NAME}"`);
  });

  it('zonal', () => {
    expect(printedDefault(helps.zonal, '--plausible')).toBe(plausible);
  });

  it('serve', () => {
    expect(helps.serve.get('--port')).toMatch(new RegExp(`else ${defaults.API_PORT}\\)`));
    expect(printedDefault(helps.serve, '--data-dir')).toBe(`"${defaults.DATA_DIR_NAME}"`);
  });

  it('trend, hotspots and export: the dates a year needs, the one the API and the report use', () => {
    for (const command of ['trend', 'hotspots', 'export']) expect(printedDefault(helps[command], '--min-dates'), command).toBe(String(defaults.MIN_DATES_PER_YEAR));
  });
});
