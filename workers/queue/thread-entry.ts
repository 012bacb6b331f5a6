/**
 * Worker-thread side of the in-process runner: imports the processors module
 * itself, runs the jobs it is sent, and reaches the repository through a proxy
 * to the main thread (the embedded database lives only there).
 */
import { parentPort, workerData, type MessagePort } from 'node:worker_threads';
import { loadProcessors, runAttempt, type JobAttempt } from './execute.js';
import { createRepoProxy, serializeError } from './repo-proxy.js';

/** repoPort is absent for a thread started ahead of its runner: the port then comes in an 'attach' message. */
interface ThreadInit { processorsModule: string; repoPort?: MessagePort }

const init = workerData as ThreadInit;
const port = parentPort!;
// Listening before the processors load, so that an early 'attach' is not missed.
const repoPort: Promise<MessagePort> = init.repoPort ? Promise.resolve(init.repoPort)
  : new Promise((resolve) => {
    const onAttach = (msg: { kind?: string; repoPort?: MessagePort }) => {
      if (msg?.kind !== 'attach' || !msg.repoPort) return;
      port.off('message', onAttach);
      resolve(msg.repoPort);
    };
    port.on('message', onAttach);
  });
const mod = await loadProcessors(init.processorsModule);
const repo = createRepoProxy(await repoPort);

port.on('message', async (msg: { kind: 'run'; attempt: JobAttempt }) => {
  if (msg?.kind !== 'run') return;
  const a = msg.attempt;
  try {
    const value = await runAttempt(mod.processors, a, repo, (line) => port.postMessage({ kind: 'log', jobId: a.jobId, line }));
    port.postMessage({ kind: 'done', jobId: a.jobId, ok: true, value: value === undefined ? null : JSON.parse(JSON.stringify(value) ?? 'null') });
  } catch (e) {
    port.postMessage({ kind: 'done', jobId: a.jobId, ok: false, error: serializeError(e) });
  }
});
port.postMessage({ kind: 'ready' });
