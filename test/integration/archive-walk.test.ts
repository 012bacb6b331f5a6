/**
 * `heatledger ingest` on an archive folder holding, beside its good scenes, a
 * symbolic link to an ancestor folder, a dangling link, a file it may not read
 * and a folder it may not list: the good scenes are stored, each bad path is
 * recorded with its reason, and the command exits 2 (not everything asked for
 * was done; house rule "exit 0 means everything asked for was done").
 *
 * Unreadable under root: root reads any file and lists any folder whatever its
 * mode bits (CAP_DAC_OVERRIDE and CAP_DAC_READ_SEARCH, capabilities(7)). So when
 * the test runs as root the command runs through setpriv(1) with those two
 * capabilities dropped from its bounding and inheritable sets: it stays root
 * (it still reads the checkout and writes its store, whatever folder they are
 * in), but mode 000 now makes open(2) and opendir(3) fail with EACCES, as for
 * any owner. Not root: the command runs as the test's own user. Root without
 * setpriv: skipped.
 *
 * References: the table must equal the table of the same archive without the
 * bad paths (the pipeline's own output on the clean archive, checked against
 * rasterio + NumPy in test/integration/pipeline.test.ts); the reasons are the
 * errno names Linux reports (path_resolution(7): ENOENT for a dangling link;
 * open(2), opendir(3): EACCES).
 */
import { spawn, spawnSync } from 'node:child_process';
import { chmod, mkdir, mkdtemp, rm, symlink, writeFile } from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { ArchiveResult } from '../../demo-data/generate.js';
import { cleanEnv, cliOk, cliPath, ensurePipelineBuild, makeArchive, repoRoot } from '../support/pipeline-harness.js';

await ensurePipelineBuild();

const asRoot = process.getuid?.() === 0;
const setpriv = asRoot ? spawnSync('setpriv', ['--version']).status === 0 : false;
const canDrop = !asRoot || setpriv;
if (!canDrop) console.log('SKIPPED archive walk as an unprivileged user: running as root without setpriv(1)');

/** Run the CLI as an unprivileged user (see the header); resolves when it exits. */
function runUnprivileged(args: string[], env: NodeJS.ProcessEnv): Promise<{ code: number | null; stdout: string; stderr: string }> {
  const [cmd, argv] = asRoot
    ? ['setpriv', ['--bounding-set=-dac_override,-dac_read_search', '--inh-caps=-dac_override,-dac_read_search', process.execPath, cliPath, ...args]]
    : [process.execPath, [cliPath, ...args]];
  const child = spawn(cmd, argv, { cwd: repoRoot, env, stdio: ['ignore', 'pipe', 'pipe'] });
  let stdout = '';
  let stderr = '';
  child.stdout.on('data', (d) => { stdout += d; });
  child.stderr.on('data', (d) => { stderr += d; });
  return new Promise((resolve) => child.once('exit', (code) => setImmediate(() => resolve({ code, stdout, stderr }))));
}

let tmp: string;
let archive: ArchiveResult;
let archiveDir: string;
beforeAll(async () => {
  tmp = await mkdtemp(path.join(os.tmpdir(), 'heatledger-walk-it-'));
  archive = await makeArchive(path.join(tmp, 'archive'), { years: 1, pairsPerYear: 1, pixelSizeMetres: 250 });
  archiveDir = path.dirname(archive.files[0]);
}, 120_000);
afterAll(async () => { await rm(tmp, { recursive: true, force: true }); });

describe.skipIf(!canDrop)('ingest of a folder with bad paths beside good scenes', () => {
  it('stores the good scenes, records each bad path with its reason and exits 2', async () => {
    const env = cleanEnv();
    // the reference: the same archive without the bad paths
    const cleanData = path.join(tmp, 'data-clean');
    await cliOk(['ingest', archiveDir, '--districts', archive.districtsPath, '--json', '--threads', '1', '--data-dir', cleanData], env, 120_000);
    const reference = JSON.parse(await cliOk(['table', '--format', 'json', '--data-dir', cleanData], env));
    expect(reference.length).toBeGreaterThan(0);

    const loop = path.join(archiveDir, 'loop');
    const dangling = path.join(archiveDir, 'gone.tif');
    const lockedFile = path.join(archiveDir, 'locked.tif');
    const lockedFolder = path.join(archiveDir, 'locked-folder');
    await symlink('.', loop); // points at the folder that contains it
    await symlink(path.join(archiveDir, 'never-written.tif'), dangling);
    await writeFile(lockedFile, 'not readable by the run');
    await chmod(lockedFile, 0o000);
    await mkdir(lockedFolder);
    await writeFile(path.join(lockedFolder, 'inside.tif'), 'never listed');
    await chmod(lockedFolder, 0o000);

    const badData = path.join(tmp, 'data-bad');
    await mkdir(badData);
    const r = await runUnprivileged(['ingest', archiveDir, '--districts', archive.districtsPath, '--json', '--threads', '1', '--data-dir', badData], env);
    expect(r.code).toBe(2);
    // the list is in the JSON on standard output, and the message says so
    expect(r.stderr).toMatch(/^heatledger: run \d+: 4 path\(s\) could not be read \(listed under "unreadable" in the JSON summary on standard output and in `heatledger status`\); the other scenes are stored\n$/);
    const summary = JSON.parse(r.stdout);
    expect(summary.scenes).toBe(archive.files.length);
    expect(summary.failures).toEqual([]);
    const expected = [
      { path: lockedFolder, reason: 'cannot list the folder (EACCES)' },
      { path: lockedFile, reason: 'cannot read (EACCES)' },
      { path: dangling, reason: `dangling symbolic link (its target ${path.join(archiveDir, 'never-written.tif')} does not exist)` },
      { path: loop, reason: expect.stringMatching(/^folder loop/) },
    ].sort((a, b) => (a.path < b.path ? -1 : 1));
    expect(summary.unreadable).toEqual(expected);

    // the store keeps each bad path as a failed scene with its reason
    const status = JSON.parse(await cliOk(['status', '--format', 'json', '--data-dir', badData], env));
    expect(status.scenes).toEqual({ registered: 0, processed: archive.files.length, failed: 4, total: archive.files.length + 4 });
    const failed = [...status.failures].sort((a: { path: string }, b: { path: string }) => (a.path < b.path ? -1 : 1));
    expect(failed.map((f: { path: string; content_hash: string | null }) => [f.path, f.content_hash])).toEqual(expected.map((e) => [e.path, null]));
    for (const [i, f] of failed.entries()) {
      expect(f.error.startsWith(`${expected[i].path}: `)).toBe(true); // the reason names the path
      expect(f.run_id).toBe(summary.run_id);
    }
    // and the text form shows them
    const text = await cliOk(['status', '--data-dir', badData], env);
    for (const e of expected) expect(text).toContain(e.path);

    // every good scene processed: the table equals that of the archive without the bad paths
    expect(JSON.parse(await cliOk(['table', '--format', 'json', '--data-dir', badData], env))).toEqual(reference);
  }, 300_000);
});
