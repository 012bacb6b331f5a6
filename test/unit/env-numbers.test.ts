/**
 * Numbers from environment variables: plain decimal digits only, one reader
 * for all of them; a bad value stops the command with exit 2 and a message
 * naming the variable, and help texts never show a value made from it.
 * Decimal positional notation (digits 0-9 only; "0x10" is hexadecimal and
 * "1e3" exponent notation, neither is plain decimal digits): common practice,
 * no source. Exit 2 for bad input is the project's exit-code contract.
 */
import { afterEach, describe, expect, it, vi } from 'vitest';
import { ENV, ENV_RANGES, envNumber, envWholeNumber } from '../../workers/config.js';
import { buildProgram, main } from '../../workers/cli-program.js';
import { InputError } from '../../workers/core/errors.js';

const PORT = { min: 0, max: 65535, unit: 'port' };

describe('envWholeNumber', () => {
  it('reads plain decimal digits within the range; unset or empty is undefined', () => {
    expect(envWholeNumber('X', PORT, { X: '8080' })).toBe(8080);
    expect(envWholeNumber('X', PORT, { X: '0' })).toBe(0);
    expect(envWholeNumber('X', PORT, { X: '065535' })).toBe(65535);
    expect(envWholeNumber('X', PORT, {})).toBeUndefined();
    expect(envWholeNumber('X', PORT, { X: '' })).toBeUndefined();
  });

  it('refuses hex, exponents, signs, blanks, points, other digits and values out of range, naming the variable', () => {
    for (const text of ['0x10', '1e3', '+5', '-1', ' 2', '2 ', '1.5', '1_000', 'Infinity', '\u0663', '65536', '99999999999999999999']) {
      expect(() => envWholeNumber('HEATLEDGER_API_PORT', PORT, { HEATLEDGER_API_PORT: text }), JSON.stringify(text)).toThrow(InputError);
    }
    expect(() => envWholeNumber('HEATLEDGER_API_PORT', PORT, { HEATLEDGER_API_PORT: '0x10' }))
      .toThrow('HEATLEDGER_API_PORT must be a whole number of port from 0 to 65535 in decimal digits, got "0x10"');
  });

  it('every numeric variable goes through it with its own range', () => {
    for (const key of Object.keys(ENV_RANGES) as (keyof typeof ENV_RANGES)[]) {
      const r = ENV_RANGES[key];
      expect(envNumber(key, { [ENV[key]]: String(r.max) }), key).toBe(r.max);
      expect(() => envNumber(key, { [ENV[key]]: '1e3' }), key).toThrow(new RegExp(`^${ENV[key]} must be a whole number of ${r.unit} from ${r.min} to ${r.max} in decimal digits, got "1e3"$`));
      expect(() => envNumber(key, { [ENV[key]]: String(r.max + 1) }), key).toThrow(InputError);
    }
  });
});

describe('the commands', () => {
  const saved = { ...process.env };
  afterEach(() => {
    for (const k of Object.keys(process.env)) if (!(k in saved)) delete process.env[k];
    Object.assign(process.env, saved);
    vi.restoreAllMocks();
  });

  async function run(argv: string[]): Promise<{ code: number; stderr: string }> {
    let stderr = '';
    vi.spyOn(process.stderr, 'write').mockImplementation((s: string | Uint8Array) => { stderr += String(s); return true; });
    const code = await main(['node', 'heatledger', ...argv]);
    return { code, stderr };
  }

  it.each([
    ['worker', [], 'HEATLEDGER_CONCURRENCY', '0x10'],
    ['worker', [], 'HEATLEDGER_STALLED_INTERVAL', '1e3'],
    ['ingest', ['nowhere.tif', '--districts', 'nowhere.geojson'], 'HEATLEDGER_SERVICE_RETRY_BUDGET', '1e3'],
    ['ingest', ['nowhere.tif', '--districts', 'nowhere.geojson'], 'HEATLEDGER_STALL_TIMEOUT', '0x10'],
    ['serve', ['--data-dir', '/nonexistent/heatledger'], 'HEATLEDGER_API_PORT', '1e3'],
  ])('%s with %s=%s: exit 2, one line naming the variable', async (command, args, name, value) => {
    delete process.env.REDIS_URL;
    delete process.env.DATABASE_URL;
    process.env[name] = value;
    const r = await run([command, ...args]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(new RegExp(`^heatledger: ${name} must be a whole number of [a-z ]+ from \\d+ to \\d+ in decimal digits, got "${value}"\\n$`));
  });

  it('help with bad values in the variables shows where each default comes from, never a value made from them', () => {
    for (const name of ['HEATLEDGER_CONCURRENCY', 'HEATLEDGER_STALLED_INTERVAL', 'HEATLEDGER_SERVICE_RETRY_BUDGET', 'HEATLEDGER_STALL_TIMEOUT', 'HEATLEDGER_API_PORT']) process.env[name] = 'abc';
    const program = buildProgram();
    const help = (c: string) => program.commands.find((x) => x.name() === c)!.helpInformation().replace(/\s+/g, ' ');
    for (const c of ['worker', 'ingest', 'serve']) {
      expect(help(c)).not.toMatch(/null|NaN|abc/);
    }
    expect(help('worker')).toContain('(default: $HEATLEDGER_CONCURRENCY, else 2)');
    expect(help('worker')).toContain('(default: $HEATLEDGER_STALLED_INTERVAL in whole seconds, else 10)');
    expect(help('ingest')).toContain('(default: $HEATLEDGER_SERVICE_RETRY_BUDGET in whole seconds, else 300)');
    expect(help('ingest')).toContain('(default: $HEATLEDGER_STALL_TIMEOUT in whole seconds, else 180)');
    expect(help('serve')).toContain('(default: $HEATLEDGER_API_PORT, else 8080)');
  });
});
