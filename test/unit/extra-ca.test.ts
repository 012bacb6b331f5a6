/**
 * NODE_EXTRA_CA_CERTS deferred by the bin (workers/extra-ca.ts): which TLS
 * settings get the certificates. Reference for the server cases: pg's own
 * reading of a connection string and of PGSSLMODE (pg-connection-string,
 * pg/lib/connection-parameters.js), which a deferred process must keep.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import tls from 'node:tls';
import { afterAll, describe, expect, it } from 'vitest';
import { DEFERRED_CA_ENV, tlsWithExtraCa } from '../../workers/extra-ca.js';
import { poolSettings } from '../../workers/store/pg.js';

const dir = mkdtempSync(path.join(os.tmpdir(), 'hl-extra-ca-unit-'));
const caFile = path.join(dir, 'extra.pem');
// any PEM text will do: the list is handed to TLS, not parsed here
const PEM = '-----BEGIN CERTIFICATE-----\nMIIBAA==\n-----END CERTIFICATE-----\n';
writeFileSync(caFile, PEM);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const deferred = { [DEFERRED_CA_ENV]: caFile };

describe('tlsWithExtraCa', () => {
  it('adds Node\'s bundled roots and the file\'s certificates when the bin deferred them', () => {
    const o = tlsWithExtraCa({ servername: 'db' }, deferred);
    expect(o.servername).toBe('db');
    expect(o.ca).toEqual([...tls.rootCertificates, PEM]);
  });

  it('leaves options alone when nothing was deferred (empty or unset) or they name their own ca', () => {
    const own = { ca: 'mine' };
    expect(tlsWithExtraCa(own, deferred)).toBe(own);
    const plain = { servername: 'db' };
    expect(tlsWithExtraCa(plain, {})).toBe(plain);
    expect(tlsWithExtraCa(plain, { [DEFERRED_CA_ENV]: '' })).toBe(plain);
  });
});

describe('poolSettings', () => {
  const ours = { max: 8, options: '-c TimeZone=UTC' };

  it('not deferred: pg reads the URL itself', () => {
    expect(poolSettings('postgres://u@h:5433/d?sslmode=verify-full', ours, {})).toEqual({ ...ours, connectionString: 'postgres://u@h:5433/d?sslmode=verify-full' });
  });

  it('deferred: TLS from the URL trusts the certificates; the URL\'s settings win over ours, as in pg', () => {
    const s = poolSettings('postgres://u@h:5433/d?sslmode=verify-full&options=-c%20search_path%3Dx', ours, deferred);
    expect(s).toMatchObject({ host: 'h', port: '5433', database: 'd', user: 'u', max: 8, options: '-c search_path=x' });
    expect((s.ssl as tls.ConnectionOptions).ca).toEqual([...tls.rootCertificates, PEM]);
    expect((s.ssl as tls.ConnectionOptions).rejectUnauthorized).not.toBe(false);
  });

  it('deferred: PGSSLMODE turns TLS on as pg would (with the certificates); disable and no mode leave it off', () => {
    for (const mode of ['prefer', 'require', 'verify-ca', 'verify-full']) {
      expect((poolSettings('postgres://u@h/d', ours, { ...deferred, PGSSLMODE: mode }).ssl as tls.ConnectionOptions).ca).toHaveLength(tls.rootCertificates.length + 1);
    }
    expect(poolSettings('postgres://u@h/d', ours, { ...deferred, PGSSLMODE: 'disable' }).ssl).toBeUndefined();
    expect(poolSettings('postgres://u@h/d', ours, deferred).ssl).toBeUndefined();
    expect(poolSettings('postgres://u@h/d?sslmode=disable', ours, { ...deferred, PGSSLMODE: 'require' }).ssl).toBe(false);
  });
});
