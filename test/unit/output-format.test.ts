import { execFileSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { commonDirectory, relativeInText, relativeToRoot } from '../../api/relative-paths.js';
import { failureLine, toCsv } from '../../workers/format.js';
import { parseYear } from '../../workers/core/year.js';

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

describe('failure lines', () => {
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
});
