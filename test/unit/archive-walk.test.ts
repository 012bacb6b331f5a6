/**
 * The folder walk never aborts on one bad path: each is reported with its reason.
 *
 * Expected verdicts come from the Linux file-system semantics the walk meets,
 * not from the project: symlink(7) / path_resolution(7) (a link whose chain
 * resolves to itself fails with ELOOP; a link to a missing target fails with
 * ENOENT), mkfifo(3) (a FIFO is not a regular file; open() for reading blocks
 * until a writer comes), stat(2) (a folder reached twice, through a link or a
 * bind mount, has the same st_dev and st_ino).
 *
 * Unreadable entries under root: tests run as root, and root reads a file or
 * lists a folder whatever its mode bits (CAP_DAC_OVERRIDE, capabilities(7)).
 * Here the walk's file-system calls are wrapped so that listing one folder
 * fails with EACCES, exactly as readdir(3) reports it to an ordinary user, and
 * a bind-mount loop (which needs mount privileges a test cannot count on) is
 * produced the same way by reporting a sub-folder with its parent's device and
 * inode. The real unreadable file and folder are covered end to end by
 * test/integration/archive-walk.test.ts, which runs the command as an
 * unprivileged user.
 */
import { execFileSync } from 'node:child_process';
import { mkdir, mkdtemp, rm, symlink, writeFile } from 'node:fs/promises';
import { lstat, readdir, readlink, stat } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { hashSceneFiles, listSceneFiles, listScenes, type WalkFs } from '../../workers/run/archive.js';

let dir: string;
beforeAll(async () => { dir = await mkdtemp(join(tmpdir(), 'heatledger-walk-')); });
afterAll(async () => { await rm(dir, { recursive: true, force: true }); });

const realFs: WalkFs = { stat, lstat, readdir: (p) => readdir(p), readlink };

/** A fresh archive folder with good files a/1.tif, a/2.tif, b/3.tif. */
async function goodArchive(name: string): Promise<string> {
  const root = join(dir, name);
  await mkdir(join(root, 'a'), { recursive: true });
  await mkdir(join(root, 'b'), { recursive: true });
  for (const f of ['a/1.tif', 'a/2.tif', 'b/3.tif']) await writeFile(join(root, f), `bytes of ${f}`);
  return root;
}

describe('bad paths are reported, the walk goes on', () => {
  it('symlink loop, self-link, dangling link and FIFO beside good files', async () => {
    const root = await goodArchive('mixed');
    await symlink('..', join(root, 'a', 'up')); // a link to an ancestor folder
    await symlink('self.tif', join(root, 'self.tif')); // resolves to itself: ELOOP (path_resolution(7))
    await symlink(join(root, 'missing.tif'), join(root, 'gone.tif')); // ENOENT on stat (symlink(7))
    execFileSync('mkfifo', [join(root, 'pipe.tif')]); // a reader would block (mkfifo(3))
    const listing = await listSceneFiles([root]);
    expect(listing.files).toEqual([join(root, 'a/1.tif'), join(root, 'a/2.tif'), join(root, 'b/3.tif')]);
    expect(listing.unreadable).toEqual([
      { path: join(root, 'a/up'), reason: expect.stringMatching(/^folder loop/) },
      { path: join(root, 'gone.tif'), reason: `dangling symbolic link (its target ${join(root, 'missing.tif')} does not exist)` },
      { path: join(root, 'pipe.tif'), reason: 'a named pipe (FIFO), not a GeoTIFF file' },
      { path: join(root, 'self.tif'), reason: 'symbolic link loop (the link resolves to itself)' },
    ]);
  });

  it('follows a link to a file or folder inside the walk once, under its real path', async () => {
    const root = await goodArchive('inside');
    await symlink(join(root, 'b'), join(root, 'a', 'b-again'));
    await symlink(join(root, 'a', '1.tif'), join(root, '0-first.tif')); // sorts before the real file
    const listing = await listSceneFiles([root]);
    expect(listing).toEqual({ files: [join(root, 'a/1.tif'), join(root, 'a/2.tif'), join(root, 'b/3.tif')], unreadable: [] });
  });

  it('walks a linked folder outside the walk under the link path', async () => {
    const root = await goodArchive('outside');
    const elsewhere = join(dir, 'elsewhere');
    await mkdir(elsewhere, { recursive: true });
    await writeFile(join(elsewhere, '9.tif'), 'bytes of 9');
    await symlink(elsewhere, join(root, 'more'));
    expect((await listSceneFiles([root])).files).toEqual([join(root, 'a/1.tif'), join(root, 'a/2.tif'), join(root, 'b/3.tif'), join(root, 'more/9.tif')]);
  });

  it('a folder that cannot be listed (EACCES, as readdir(3) reports it to a non-root user)', async () => {
    const root = await goodArchive('locked');
    const locked = join(root, 'b');
    const fs: WalkFs = {
      ...realFs,
      readdir: async (p) => {
        if (p === locked) throw Object.assign(new Error(`EACCES: permission denied, scandir '${p}'`), { code: 'EACCES' });
        return realFs.readdir(p);
      },
    };
    expect(await listSceneFiles([root], fs)).toEqual({
      files: [join(root, 'a/1.tif'), join(root, 'a/2.tif')],
      unreadable: [{ path: locked, reason: 'cannot list the folder (EACCES)' }],
    });
  });

  it('a bind-mount loop: a sub-folder with the device and inode of its parent (stat(2))', async () => {
    const root = await goodArchive('mount');
    await mkdir(join(root, 'a', 'mnt'));
    const parent = await stat(join(root, 'a'));
    const same = (s: Awaited<ReturnType<typeof stat>>) => Object.assign(Object.create(Object.getPrototypeOf(s)), s, { dev: parent.dev, ino: parent.ino });
    const fs: WalkFs = {
      ...realFs,
      lstat: async (p) => (p === join(root, 'a', 'mnt') ? same(await lstat(p)) : lstat(p)),
    };
    const listing = await listSceneFiles([root], fs);
    expect(listing.files).toEqual([join(root, 'a/1.tif'), join(root, 'a/2.tif'), join(root, 'b/3.tif')]);
    expect(listing.unreadable).toEqual([{ path: join(root, 'a/mnt'), reason: expect.stringMatching(/^folder loop/) }]);
  });

  it('a command-line folder that cannot be reached (EACCES on stat, as stat(2) reports it for a parent without search permission)', async () => {
    const root = await goodArchive('unreachable');
    const blocked = join(root, 'b');
    const fs: WalkFs = {
      ...realFs,
      stat: async (p) => {
        if (p === blocked) throw Object.assign(new Error(`EACCES: permission denied, stat '${p}'`), { code: 'EACCES' });
        return realFs.stat(p);
      },
    };
    expect(await listSceneFiles([join(root, 'a'), blocked], fs)).toEqual({
      files: [join(root, 'a/1.tif'), join(root, 'a/2.tif')],
      unreadable: [{ path: blocked, reason: 'cannot read (EACCES)' }],
    });
  });

  it('a path on the command line that does not exist stops the run before it starts (a typo)', async () => {
    await expect(listSceneFiles([join(dir, 'no-such-folder')])).rejects.toThrow(/no-such-folder: no such file or folder/);
  });

  it('a file that cannot be read is reported by the hashing step, not thrown', async () => {
    // Reading a folder fails with EISDIR for root too (read(2)), so it stands in for an unreadable file.
    const root = await goodArchive('hash');
    const r = await hashSceneFiles([join(root, 'a/1.tif'), join(root, 'b')]);
    expect(r.scenes.map((s) => s.path)).toEqual([join(root, 'a/1.tif')]);
    expect(r.unreadable).toEqual([{ path: join(root, 'b'), reason: 'cannot read (EISDIR)' }]);
  });

  it('nothing readable at all is one error listing the bad paths', async () => {
    const root = join(dir, 'only-bad');
    await mkdir(root);
    await symlink(join(root, 'missing.tif'), join(root, 'gone.tif'));
    await expect(listScenes([root], [])).rejects.toThrow(/no readable GeoTIFF .*1 path\(s\) could not be read: .*gone\.tif: dangling symbolic link/);
  });
});
