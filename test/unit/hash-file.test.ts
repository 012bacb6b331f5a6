/**
 * File hashes, the scenes' identity: checked against GNU coreutils' `sha256sum`
 * (FIPS 180-4 SHA-256), which shares no code with Node's crypto, on files
 * shorter than, equal to and longer than the read chunk, and on an empty file.
 * The archive's hashing reads several files at once, on worker threads when
 * there are many; outcomes and duplicates must still come in the order the
 * files were given.
 */
import { execFileSync } from 'node:child_process';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { hashFile, READ_CHUNK_BYTES } from '../../workers/core/hash.js';
import { hashSceneFiles } from '../../workers/run/archive.js';
import { hashFiles, hashHere, hashThreadEntry, THREAD_MIN_FILES } from '../../workers/run/hash-threads.js';
import { mulberry32 } from '../../workers/core/prng.js';

let dir: string;
beforeAll(async () => { dir = await mkdtemp(join(tmpdir(), 'heatledger-hash-')); });
afterAll(async () => { await rm(dir, { recursive: true, force: true }); });

function sha256sum(path: string): string {
  return execFileSync('sha256sum', ['--binary', path], { encoding: 'utf8' }).split(' ')[0];
}

function bytes(n: number, seed: number): Uint8Array {
  const rand = mulberry32(seed);
  const out = new Uint8Array(n);
  for (let i = 0; i < n; i++) out[i] = Math.floor(rand() * 256);
  return out;
}

describe('hashFile', () => {
  it.each([
    ['empty', 0],
    ['one byte', 1],
    ['one byte under a chunk', READ_CHUNK_BYTES - 1],
    ['exactly a chunk', READ_CHUNK_BYTES],
    ['two and a half chunks', Math.floor(2.5 * READ_CHUNK_BYTES)],
  ])('%s (%i bytes) equals sha256sum', async (_name, n) => {
    const path = join(dir, `f-${n}.bin`);
    await writeFile(path, bytes(n, n + 1));
    expect(await hashFile(path)).toBe(sha256sum(path));
    // a small caller-given buffer: many reads, the same hash
    expect(await hashFile(path, Buffer.alloc(4093))).toBe(sha256sum(path));
  });

  it('names the file and the reason when it cannot be read', async () => {
    await expect(hashFile(join(dir, 'missing.tif'))).rejects.toThrow(/missing\.tif: cannot read \(ENOENT\)/);
    await expect(hashFile(dir)).rejects.toThrow(/cannot read \(EISDIR\)/);
  });
});

describe('hashSceneFiles', () => {
  it('reads files several at a time yet names duplicates in the order given', async () => {
    // 9 files, sizes chosen so that later files finish first; copies of file 0 at 3 and 7, of file 1 at 8
    const contents = [3_000_000, 2_000_000, 10, 20, 30, 40, 50, 60, 70].map((n, i) => bytes(n, 100 + i));
    contents[3] = contents[0];
    contents[7] = contents[0];
    contents[8] = contents[1];
    const paths = contents.map((_, i) => join(dir, `scene-${i}.tif`));
    await Promise.all(paths.map((p, i) => writeFile(p, contents[i])));
    const r = await hashSceneFiles([...paths, join(dir, 'gone.tif')]);
    expect(r.scenes.map((s) => s.path)).toEqual([0, 1, 2, 4, 5, 6].map((i) => paths[i]));
    expect(r.scenes.map((s) => s.contentHash)).toEqual([0, 1, 2, 4, 5, 6].map((i) => sha256sum(paths[i])));
    expect(r.duplicates).toEqual([
      { path: paths[3], sameAs: paths[0] },
      { path: paths[7], sameAs: paths[0] },
      { path: paths[8], sameAs: paths[1] },
    ]);
    expect(r.unreadable).toEqual([{ path: join(dir, 'gone.tif'), reason: 'cannot read (ENOENT)' }]);
  });
});

describe('hashFiles', () => {
  it('hashes many files on worker threads with the outcomes of the calling thread, in the order given', async () => {
    // the compiled module is the threads' entry (npm test builds first)
    expect(hashThreadEntry()).toMatch(/dist\/workers\/run\/hash-threads\.js$/);
    const paths = Array.from({ length: THREAD_MIN_FILES + 5 }, (_, i) => join(dir, `many-${i}.bin`));
    await Promise.all(paths.map((p, i) => writeFile(p, bytes(1000 + 97_531 * i, 500 + i))));
    const asked = [...paths.slice(0, 6), join(dir, 'no-such.tif'), dir, ...paths.slice(6)];
    const threaded = await hashFiles(asked);
    expect(threaded).toEqual(await hashHere(asked));
    expect(threaded.filter((o) => o.ok).map((o) => (o as { hash: string }).hash)).toEqual(paths.map(sha256sum));
    expect(threaded[6]).toEqual({ ok: false, message: `${join(dir, 'no-such.tif')}: cannot read (ENOENT)` });
    expect(threaded[7]).toEqual({ ok: false, message: `${dir}: cannot read (EISDIR)` });
  });
});
