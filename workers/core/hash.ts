/**
 * SHA-256 content hashes, in one place: of a file's bytes (scene identity), of
 * a text (job ids, socket names) and of a JSON value with sorted keys
 * (parameter fingerprints). All lower-case hex.
 */
import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';
import { InputError } from './errors.js';

/** SHA-256 (hex) of a text (UTF-8) or bytes. */
export function sha256Hex(data: string | Uint8Array): string {
  return createHash('sha256').update(data).digest('hex');
}

/** SHA-256 of a file's bytes, streamed (hex). @throws InputError naming the file when it cannot be read */
export function hashFile(path: string): Promise<string> {
  return new Promise((resolvePromise, reject) => {
    const h = createHash('sha256');
    createReadStream(path, { highWaterMark: 1 << 20 })
      .on('data', (c) => h.update(c))
      .on('error', (e) => reject(new InputError(`cannot read (${(e as NodeJS.ErrnoException).code ?? e.message})`, path)))
      .on('end', () => resolvePromise(h.digest('hex')));
  });
}

/** SHA-256 (hex) of a JSON-serialisable value with sorted keys: parameter fingerprints. */
export function fingerprint(...parts: unknown[]): string {
  const canon = (v: unknown): unknown =>
    v && typeof v === 'object' && !Array.isArray(v)
      ? Object.fromEntries(Object.keys(v as object).sort().map((k) => [k, canon((v as Record<string, unknown>)[k])]))
      : Array.isArray(v) ? v.map(canon) : v;
  return sha256Hex(JSON.stringify(parts.map(canon)));
}
