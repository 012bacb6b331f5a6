/**
 * Hashing an archive's files on worker threads. A run cannot plan its jobs
 * before every file is hashed (job ids are content hashes), and meanwhile the
 * main thread has its own start-up to do: loading the queue client, opening
 * the store (the embedded database's engine runs on the main thread). Hashed on
 * the main thread, the 260 MB of the 200-scene bench archive kept it busy for
 * another 0.25-0.45 s while the cores that later run the jobs sat idle.
 *
 * This module is also the threads' entry: started as a worker thread, it hashes
 * the paths it is given and posts the outcomes back.
 */
import os from 'node:os';
import path from 'node:path';
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { Worker, isMainThread, parentPort, workerData } from 'node:worker_threads';
import { hashFile, READ_CHUNK_BYTES } from '../core/hash.js';

/** A file's hash, or why it could not be read (the InputError's message, naming the file). */
export type HashOutcome = { ok: true; hash: string } | { ok: false; message: string };

/** Files hashed at once by one thread: their reads overlap each other's hashing (a few are enough; more only add buffers). */
const CONCURRENT_FILES = 4;

/** Below this many files a thread's start (~20-40 ms) costs more than it frees. */
export const THREAD_MIN_FILES = 8;

/** Hash `paths` on this thread, a few files at a time; outcomes in the order given. */
export async function hashHere(paths: readonly string[]): Promise<HashOutcome[]> {
  const out: HashOutcome[] = new Array(paths.length);
  let next = 0;
  const reader = async (buffer: Buffer) => {
    for (let i = next++; i < paths.length; i = next++) {
      try {
        out[i] = { ok: true, hash: await hashFile(paths[i], buffer) };
      } catch (e) {
        out[i] = { ok: false, message: (e as Error).message };
      }
    }
  };
  await Promise.all(Array.from({ length: Math.min(CONCURRENT_FILES, paths.length) }, () => reader(Buffer.allocUnsafe(READ_CHUNK_BYTES))));
  return out;
}

/** This module compiled: itself, or under dist/ when the sources run as TypeScript (tests); null when not built. */
export function hashThreadEntry(): string | null {
  const here = fileURLToPath(import.meta.url);
  if (here.endsWith('.js')) return here;
  const compiled = path.resolve(path.dirname(here), '../../dist/workers/run/hash-threads.js');
  return existsSync(compiled) ? compiled : null;
}

/** Hash one share of the files on a new thread; if the thread cannot start or dies, the share is hashed here. */
function hashOnThread(entry: string, paths: readonly string[]): Promise<HashOutcome[]> {
  return new Promise((resolve) => {
    let settled = false;
    const fallBack = () => { if (!settled) { settled = true; resolve(hashHere(paths)); } };
    let worker: Worker;
    try {
      worker = new Worker(entry, { workerData: { hashPaths: paths } });
    } catch {
      fallBack();
      return;
    }
    worker.once('message', (outcomes: HashOutcome[]) => { if (!settled) { settled = true; resolve(outcomes); } });
    worker.once('error', fallBack);
    worker.once('exit', fallBack);
  });
}

/**
 * Hash every file, outcomes in the order given: on up to two worker threads
 * (each taking every other file) when there are enough files and the module is
 * built, else on this thread. The bytes read and the hash computed are the same
 * either way ({@link hashFile}).
 */
export async function hashFiles(paths: readonly string[]): Promise<HashOutcome[]> {
  const entry = paths.length >= THREAD_MIN_FILES ? hashThreadEntry() : null;
  if (!entry) return hashHere(paths);
  const threads = Math.min(2, os.availableParallelism());
  const shares = Array.from({ length: threads }, (_, k) => paths.filter((_, i) => i % threads === k));
  const results = await Promise.all(shares.map((share) => hashOnThread(entry, share)));
  return paths.map((_, i) => results[i % threads][Math.floor(i / threads)]);
}

if (!isMainThread && parentPort && (workerData as { hashPaths?: string[] } | null)?.hashPaths) {
  const port = parentPort;
  void hashHere((workerData as { hashPaths: string[] }).hashPaths).then((outcomes) => port.postMessage(outcomes));
}
