/**
 * The environment the `heatledger` bin's first line gives node (workers/cli.ts),
 * run by the system's own `env` as the kernel runs the line: everything after
 * `#!/usr/bin/env ` is one argument (Linux execve; `env -S` splits it and
 * expands ${NAME}, GNU coreutils manual, "env invocation"). A stand-in `node`
 * early on PATH prints what it was given. Then restoreUserEnv, which gives
 * the processes a command starts the user's values back.
 */
import { spawnSync } from 'node:child_process';
import { chmodSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { DEFERRED_TUNABLES_ENV, HUGE_PAGES_TUNABLE, restoreUserEnv } from '../../workers/bin-env.js';
import { DEFERRED_CA_ENV } from '../../workers/extra-ca.js';

const CLI_SOURCE = path.resolve(import.meta.dirname, '../../workers/cli.ts');
const dir = mkdtempSync(path.join(os.tmpdir(), 'hl-bin-env-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

// prints the variables the line sets, one per line, then its arguments
writeFileSync(path.join(dir, 'node'), '#!/bin/sh\nprintf "%s\\n" "GLIBC_TUNABLES=${GLIBC_TUNABLES-<unset>}" ' +
  `"${DEFERRED_TUNABLES_ENV}=\${${DEFERRED_TUNABLES_ENV}-<unset>}" "NODE_EXTRA_CA_CERTS=\${NODE_EXTRA_CA_CERTS-<unset>}" "$@"\n`);
chmodSync(path.join(dir, 'node'), 0o755);

function runFirstLine(userEnv: Record<string, string>): string[] {
  const first = readFileSync(CLI_SOURCE, 'utf8').split('\n', 1)[0];
  expect(first.startsWith('#!/usr/bin/env ')).toBe(true);
  expect(first).toContain(` GLIBC_TUNABLES=${HUGE_PAGES_TUNABLE}:${'${GLIBC_TUNABLES}'} `);
  const env = { PATH: `${dir}:/usr/bin:/bin`, ...userEnv };
  const r = spawnSync('/usr/bin/env', [first.slice('#!/usr/bin/env '.length), 'cli.js', '--version'], { env, encoding: 'utf8' });
  expect(r.status).toBe(0);
  return r.stdout.trimEnd().split('\n');
}

describe('the bin\'s first line', () => {
  it('asks glibc for huge pages, keeps a value the user set after its own (the later one wins) and keeps the user\'s value aside', () => {
    const lines = runFirstLine({ GLIBC_TUNABLES: 'glibc.malloc.tcache_count=3' });
    expect(lines[0]).toBe('GLIBC_TUNABLES=glibc.malloc.hugetlb=1:glibc.malloc.tcache_count=3');
    expect(lines[1]).toBe(`${DEFERRED_TUNABLES_ENV}=glibc.malloc.tcache_count=3`);
    expect(lines.slice(3)).toEqual(['--no-concurrent-recompilation', 'cli.js', '--version']);
  });

  it('without a user value: ours alone, an empty value aside, NODE_EXTRA_CA_CERTS unset for node', () => {
    const lines = runFirstLine({ NODE_EXTRA_CA_CERTS: '/etc/ssl/extra.pem' });
    expect(lines[0]).toBe('GLIBC_TUNABLES=glibc.malloc.hugetlb=1:');
    expect(lines[1]).toBe(`${DEFERRED_TUNABLES_ENV}=`);
    expect(lines[2]).toBe('NODE_EXTRA_CA_CERTS=<unset>');
  });
});

describe('restoreUserEnv', () => {
  it('gives back the user\'s GLIBC_TUNABLES and NODE_EXTRA_CA_CERTS, keeping the CA path for our own TLS', () => {
    const env: NodeJS.ProcessEnv = {
      GLIBC_TUNABLES: 'glibc.malloc.hugetlb=1:glibc.malloc.tcache_count=3',
      [DEFERRED_TUNABLES_ENV]: 'glibc.malloc.tcache_count=3',
      [DEFERRED_CA_ENV]: '/etc/ssl/extra.pem',
    };
    restoreUserEnv(env);
    expect(env).toEqual({ GLIBC_TUNABLES: 'glibc.malloc.tcache_count=3', NODE_EXTRA_CA_CERTS: '/etc/ssl/extra.pem', [DEFERRED_CA_ENV]: '/etc/ssl/extra.pem' });
  });

  it('removes GLIBC_TUNABLES the user had not set, and changes nothing in a process the bin did not start', () => {
    const env: NodeJS.ProcessEnv = { GLIBC_TUNABLES: 'glibc.malloc.hugetlb=1:', [DEFERRED_TUNABLES_ENV]: '', [DEFERRED_CA_ENV]: '' };
    restoreUserEnv(env);
    expect(env).toEqual({ [DEFERRED_CA_ENV]: '' });
    const plain: NodeJS.ProcessEnv = { GLIBC_TUNABLES: 'glibc.malloc.tcache_count=3', NODE_EXTRA_CA_CERTS: '/a.pem' };
    restoreUserEnv(plain);
    expect(plain).toEqual({ GLIBC_TUNABLES: 'glibc.malloc.tcache_count=3', NODE_EXTRA_CA_CERTS: '/a.pem' });
  });
});
