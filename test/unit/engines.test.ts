/**
 * Every package the lockfile installs accepts the oldest Node the project supports
 * (package.json "engines"), so `npm ci` on Node 20 gives no EBADENGINE warning: each
 * package's own published "engines.node" range, as npm records it in package-lock.json,
 * is checked with npm's semver library (the same range rules npm applies).
 */
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import semver from 'semver';
import { describe, expect, it } from 'vitest';

const repoRoot = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');

interface LockPackage { version?: string; engines?: Record<string, string> | string[] }

const pkg = JSON.parse(readFileSync(path.join(repoRoot, 'package.json'), 'utf8')) as { engines: { node: string }; overrides?: Record<string, Record<string, string>> };
const lock = JSON.parse(readFileSync(path.join(repoRoot, 'package-lock.json'), 'utf8')) as { packages: Record<string, LockPackage> };

describe('the installed packages and the Node versions the project supports', () => {
  const oldest = semver.minVersion(pkg.engines.node)!.version;

  it('the project names a Node 20 floor', () => {
    expect(semver.major(oldest)).toBe(20);
  });

  it(`every package in package-lock.json accepts Node ${oldest}`, () => {
    const refused: string[] = [];
    let checked = 0;
    for (const [where, p] of Object.entries(lock.packages)) {
      if (where === '' || !p.engines || Array.isArray(p.engines) || typeof p.engines.node !== 'string') continue;
      checked++;
      if (!semver.satisfies(oldest, p.engines.node)) refused.push(`${where}@${p.version}: node ${p.engines.node}`);
    }
    expect(checked).toBeGreaterThan(50);
    expect(refused).toEqual([]);
  });

  it('the two overridden dependencies are the versions pinned for Node 20', () => {
    const versionsOf = (name: string) => Object.entries(lock.packages).filter(([where]) => where.endsWith(`node_modules/${name}`)).map(([, p]) => p.version);
    expect(versionsOf('content-disposition')).toEqual([pkg.overrides?.['@fastify/static']?.['content-disposition']]);
    expect(versionsOf('cookie')).toEqual([pkg.overrides?.['light-my-request']?.cookie]);
  });
});
