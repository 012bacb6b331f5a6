import { execFileSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { commonDirectory, fileForReader, handedOnParameters, relativeInText, relativeToRoot } from '../../workers/core/relative-paths.js';
import { readRuralDescription, writeRuralDescription } from '../../workers/core/districts/rural-description.js';
import { failureLine, PRECISION, roundNumber, snakeCase, snakeCaseKeys, toCsv } from '../../workers/format.js';
import { failedJobLine, summaryJson } from '../../workers/commands/ingest.js';
import type { PipelineSummary } from '../../workers/run/pipeline.js';
import { parseYear } from '../../workers/core/year.js';
import { InputError, ServiceError } from '../../workers/core/errors.js';
import { failureRecord } from '../../workers/queue/retry.js';

/** Python's csv module (an RFC 4180 reader) as the outside reference for what a CSV says. */
function readCsv(text: string): string[][] {
  return JSON.parse(execFileSync('/usr/bin/python3', ['-c', 'import csv, io, json, sys; print(json.dumps(list(csv.reader(io.StringIO(sys.stdin.read(), newline="")))))'], { input: text, encoding: 'utf8' }));
}

describe('CSV cells', () => {
  it('escapes every text cell a spreadsheet would run as a formula, and only those', () => {
    // OWASP "CSV Injection": cells beginning with = + - @ tab (0x09) or carriage return (0x0D)
    // get a leading single quote and are wrapped in double quotes
    const dangerous = ['=1+2', '+1', '-1', '@SUM(A1)', '\tx', '\rx', '=HYPERLINK("https://example.invalid/","open")'];
    const plain = ['Core', 'a,b', 'say "hi"', '2024-07-14', 'x=1', ' -1'];
    const rows = [...dangerous, ...plain].map((name) => ({ name }));
    const text = toCsv(rows, ['name']);
    const cells = readCsv(text).slice(1).map((r) => r[0]);
    expect(cells).toEqual([...dangerous.map((s) => `'${s}`), ...plain]);
    for (const s of dangerous) expect(text).toContain(`"'${s.replace(/"/g, '""')}"`);
  });
  it('keeps numbers numbers: a negative value is written as itself, unquoted', () => {
    const text = toCsv([{ district: 'park', suhi_day: -1.2345, suhi_night: -0.5, ati: 0.04, missing: null, flag: false }]);
    expect(text).toBe('district,suhi_day,suhi_night,ati,missing,flag\npark,-1.2345,-0.5,0.04,,false\n');
    const [, row] = readCsv(text);
    expect(Number(row[1])).toBe(-1.2345);
  });
});

/** Python's decimal formatting (format spec `.4f`, `.6g`) as the outside reference for rounding. */
function pythonRound(values: number[], spec: string): number[] {
  return JSON.parse(execFileSync('/usr/bin/python3', ['-c', `import json, sys; print(json.dumps([float(format(x, sys.argv[2])) for x in json.loads(sys.argv[1])]))`, JSON.stringify(values), spec], { encoding: 'utf8' }));
}

describe('rounding to the stated precision', () => {
  // float noise of the kind a mean of scaled integers leaves (0.1 + 0.2 = 0.30000000000000004, IEEE 754 binary64)
  const kelvin = [312.74024810000003, 291.00005000000001, 300.85388856228184, 0.1 + 0.2, -1.23456789, 7.740248100000030, 310.0, -0.00004];
  const ati = [0.863 / 22.64024810000003, 0.88 / 22, 0.018987654321, 1.2345678e-7, 0.5];
  it('gives temperatures to 0.0001 K, as Python formats them with .4f', () => {
    expect(roundNumber(312.74024810000003, PRECISION.kelvin)).toBe(312.7402);
    expect(String(roundNumber(312.74024810000003, PRECISION.kelvin))).toBe('312.7402');
    expect(kelvin.map((x) => roundNumber(x, PRECISION.kelvin))).toEqual(pythonRound(kelvin, '.4f').map((x) => (Object.is(x, -0) ? 0 : x)));
  });
  it('gives ATI and p values to 6 significant digits, as Python formats them with .6g', () => {
    expect(ati.map((x) => roundNumber(x, PRECISION.perKelvin))).toEqual(pythonRound(ati, '.6g'));
    expect(ati.map((x) => roundNumber(x, PRECISION.probability))).toEqual(pythonRound(ati, '.6g'));
  });
  it('gives fractions to 6 decimals and keeps null for missing values', () => {
    const f = [0.9470338983050848, 1 / 3, 0.0000004, 1];
    expect(f.map((x) => roundNumber(x, PRECISION.fraction))).toEqual(pythonRound(f, '.6f'));
    expect([null, undefined, NaN, Infinity].map((x) => roundNumber(x as number | null, PRECISION.kelvin))).toEqual([null, null, null, null]);
  });
});

describe('JSON keys', () => {
  it('are snake_case at any depth', () => {
    expect(['sceneId', 'contentHash', 'serviceFailingSeconds', 'runId', 'valid_fraction', 'p10', 'area_m2', 'byKind'].map(snakeCase))
      .toEqual(['scene_id', 'content_hash', 'service_failing_seconds', 'run_id', 'valid_fraction', 'p10', 'area_m2', 'by_kind']);
    expect(snakeCaseKeys({ runId: 1, outcome: { scenesLeft: 0 }, duplicates: [{ sameAs: '/a.tif', path: '/b.tif' }], note: null }))
      .toEqual({ run_id: 1, outcome: { scenes_left: 0 }, duplicates: [{ same_as: '/a.tif', path: '/b.tif' }], note: null });
  });
  it('of the ingest summary are snake_case, each error as recorded with its kind beside it, and its seconds rounded', () => {
    const summary: PipelineSummary = {
      runId: 3, mode: 'embedded', scenes: 2, duplicates: [{ path: '/a/copy.tif', sameAs: '/a/x.tif' }], unreadable: [],
      failures: [{ id: 'j1', name: 'ingest', kind: 'input', error: '/a/bad.tif: not a TIFF file' }],
      derive: { rows: 4, ok: 4, scenes: { processed: 1, failed: 1 } },
      outcome: { status: 'incomplete', scenesLeft: 0, refused: 1, derived: true, error: '1 file refused', errorKind: 'input' },
      seconds: 12.345678901,
    };
    const json = summaryJson(summary) as Record<string, unknown>;
    const keys = (v: unknown): string[] => (Array.isArray(v) ? v.flatMap(keys) : v && typeof v === 'object' ? Object.entries(v).flatMap(([k, x]) => [k, ...keys(x)]) : []);
    for (const k of keys(json)) expect(k).toMatch(/^[a-z0-9_]+$/);
    expect(json).toMatchObject({ run_id: 3, seconds: 12.346, duplicates: [{ same_as: '/a/x.tif' }], outcome: { scenes_left: 0, error: '1 file refused', error_kind: 'input' } });
    expect(json.failures).toEqual([{ id: 'j1', name: 'ingest', kind: 'input', error: '/a/bad.tif: not a TIFF file' }]);
  });
});

describe('failure lines', () => {
  it('come from failures recorded as their message with the kind apart, printed as recorded', () => {
    // the kinds of workers/core/errors.ts: InputError input, ServiceError service, anything else a bug
    expect(failureRecord(new InputError('not a TIFF file', '/a/b.tif'), null, 5)).toEqual({ kind: 'input', error: '/a/b.tif: not a TIFF file', atMs: 5 });
    expect(failureRecord(new ServiceError('PostgreSQL is unreachable', { service: 'PostgreSQL' }), null, 5))
      .toEqual({ kind: 'service', error: 'PostgreSQL is unreachable', service: 'PostgreSQL', serviceFailingSinceMs: 5, atMs: 5 });
    expect(failureRecord(new TypeError('x is not a function'), null, 5)).toEqual({ kind: 'bug', error: 'x is not a function', atMs: 5 });
    expect(failedJobLine({ id: 'j', name: 'ingest', kind: 'input', error: '/a/b.tif: not a TIFF file' })).toBe('/a/b.tif: not a TIFF file');
    expect(failedJobLine({ id: 'j', name: 'zonal', kind: 'service', error: 'PostgreSQL is unreachable' })).toBe('zonal step: PostgreSQL is unreachable');
  });
  it('name the file once', () => {
    expect(failureLine('/a/b.tif', '/a/b.tif: not a TIFF file')).toBe('/a/b.tif: not a TIFF file');
    expect(failureLine('/a/b.tif', 'not a TIFF file')).toBe('/a/b.tif: not a TIFF file');
    // another file named first (a QA raster of the scene) is kept, with the scene before it
    expect(failureLine('/a/b.tif', '/a/qa.tif: not a TIFF file')).toBe('/a/b.tif: /a/qa.tif: not a TIFF file');
  });
});

describe('years', () => {
  it('take decimal digits from 1950 to 2100 and nothing else', () => {
    expect(parseYear('1950', 'year')).toBe(1950);
    expect(parseYear('2100', 'year')).toBe(2100);
    // ECMA-262 StringToNumber accepts every one of these (hex, binary, octal, exponent, blanks, sign)
    for (const t of ['0x7e4', '0b11111100100', '0o3744', '2.02e3', ' 2020', '2020 ', '+2020', '2020.0', '1949', '2101', '', 'Infinity']) {
      expect(() => parseYear(t, 'year'), JSON.stringify(t)).toThrow(/year must be a year written in decimal digits from 1950 to 2100/);
    }
  });
});

describe('paths relative to a data root', () => {
  const python = (code: string, ...args: string[]) => JSON.parse(execFileSync('/usr/bin/python3', ['-c', `import json, os, sys\n${code}`, ...args], { encoding: 'utf8' }));

  it('find the deepest common folder as os.path.commonpath does', () => {
    const cases = [
      ['/srv/archive/2023/a.tif', '/srv/archive/2024/b.tif'],
      ['/srv/archive/2024/a.tif', '/srv/archive/2024/b.tif'],
      ['/srv/a.tif', '/data/b.tif'],
      ['/srv/archive/a.tif'],
      ['/srv/arch/a.tif', '/srv/archive/b.tif'],
    ];
    for (const paths of cases) {
      const want = python('print(json.dumps(os.path.commonpath([os.path.dirname(p) for p in json.loads(sys.argv[1])])))', JSON.stringify(paths));
      expect(commonDirectory(paths), paths.join(' ')).toBe(want);
    }
    expect(commonDirectory([])).toBeNull();
  });
  it('relate a path inside the root as os.path.relpath does, and cut one outside to its name', () => {
    for (const [p, root] of [['/srv/archive/2023/a.tif', '/srv/archive'], ['/srv/archive/a.tif', '/srv/archive'], ['/srv/archive/x/y/z.tif', '/']]) {
      expect(relativeToRoot(p, root)).toBe(python('print(json.dumps(os.path.relpath(sys.argv[1], sys.argv[2])))', p, root));
    }
    expect(relativeToRoot('/srv/archive2/a.tif', '/srv/archive')).toBe('a.tif');
    expect(relativeToRoot('/other/a.tif', '/srv/archive')).toBe('a.tif');
    expect(relativeToRoot('/srv/archive/a.tif', null)).toBe('a.tif');
  });
  it('rewrite every absolute path inside a message', () => {
    expect(relativeInText('/srv/archive/2023/a.tif: QA raster /srv/archive/2023/qa.tif (ENOENT) and /etc/x', '/srv/archive'))
      .toBe('2023/a.tif: QA raster 2023/qa.tif (ENOENT) and x');
    expect(relativeInText('ATI in 1/K, day/night', '/srv')).toBe('ATI in 1/K, day/night');
  });
  it('name a file by os.path.basename when no root applies, a relative path included (its starting folder is unknown)', () => {
    for (const p of ['/srv/heat data/water polygons.geojson', 'inputs/../sea/water.geojson', 'water.geojson', '/srv/a/b/']) {
      expect(fileForReader(p, null), p).toBe(python('print(json.dumps(os.path.basename(os.path.normpath(sys.argv[1]))))', p));
    }
    expect(fileForReader('/srv/archive/aux/water.geojson', '/srv/archive')).toBe('aux/water.geojson');
  });
  it('hand on a run\'s parameters with no folder of the server in them, the rest as stored (project rule, no source)', () => {
    const folder = '/srv/heat data/run 7';
    const stored = {
      coverageRule: 'centre',
      ruralReference: { districtId: 'rural', description: writeRuralDescription({ kind: 'ring', innerMetres: 2000, outerMetres: 10000, waterPath: `${folder}/sea and river.geojson` }) },
      plausibleRangeKelvin: [170, 360],
      qaMaskBits: null,
      districtIds: ['D01', '/D02'],
      note: 'manifest /srv/archive/manifest.csv read',
    };
    const out = handedOnParameters(stored, null);
    expect(JSON.stringify(out)).not.toContain('/srv');
    expect(out).toEqual({
      ...stored,
      ruralReference: { districtId: 'rural', description: 'ring 2000-10000 m outside the union of the districts, water from sea and river.geojson excluded' },
      note: 'manifest manifest.csv read',
    });
    // user polygons: the whole path, blanks included, becomes the file name
    const polygons = handedOnParameters({ ruralReference: { districtId: 'rural', description: writeRuralDescription({ kind: 'polygons', path: `${folder}/rural area.geojson` }) } }, '/srv/heat data');
    expect(polygons.ruralReference).toEqual({ districtId: 'rural', description: 'user polygon(s) from run 7/rural area.geojson' });
    expect(readRuralDescription('ring 2000-10000 m outside the union of the districts')).toEqual({ kind: 'ring', innerMetres: 2000, outerMetres: 10000, waterPath: null });
  });
});
