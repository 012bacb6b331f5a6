/**
 * A repository proxy across threads. The embedded database lives only in the
 * main thread; a job on a worker thread gets an object whose every method call
 * is posted to the main thread, run there on the real repository, and answered
 * with the result or the error (name and message kept, so an InputError thrown
 * by the repository is still an InputError on the thread).
 *
 * Generic: any object of async methods; arguments and results must survive
 * structured clone (plain objects, arrays, typed arrays, Dates, Maps ...).
 */
import type { MessagePort } from 'node:worker_threads';
import { failureKind, InputError, ServiceError, type FailureKind, type ServiceName } from '../core/errors.js';

/** An error flattened for postMessage. */
export interface SerializedError {
  name: string;
  message: string;
  stack?: string;
  source?: string;
  /** What kind of failure it is (kept across the thread, see failureKind). */
  kind?: FailureKind;
  /** The service of a ServiceError, when known. */
  service?: ServiceName;
}

interface CallMessage { kind: 'repo-call'; callId: number; method: string; args: unknown[] }
interface ReplyMessage { kind: 'repo-reply'; callId: number; ok: boolean; value?: unknown; error?: SerializedError }

/** Flatten any thrown value to name/message/stack. */
export function serializeError(e: unknown): SerializedError {
  if (e instanceof Error) {
    const out: SerializedError = { name: e.name, message: e.message, stack: e.stack, kind: failureKind(e) };
    const source = (e as { source?: unknown }).source;
    if (typeof source === 'string') out.source = source;
    const service = (e as { service?: unknown }).service;
    if (typeof service === 'string') out.service = service as ServiceName;
    return out;
  }
  return { name: 'Error', message: String(e) };
}

/**
 * Rebuild an error from `serializeError`'s output: input and service failures
 * come back as InputError and ServiceError; other errors as Error carrying the original name.
 */
export function reviveError(s: SerializedError): Error {
  let e: Error;
  if (s.kind === 'input') {
    // The message already carries the source prefix; keep it as is.
    e = new InputError(s.message);
    if (s.source !== undefined) Object.defineProperty(e, 'source', { value: s.source, enumerable: true });
  } else if (s.kind === 'service') {
    e = new ServiceError(s.message, { service: s.service });
  } else {
    e = new Error(s.message);
    Object.defineProperty(e, 'name', { value: s.name, configurable: true, writable: true });
  }
  if (s.stack) e.stack = s.stack;
  return e;
}

/**
 * Answer repository calls arriving on `port` by calling `repo`'s methods.
 * Returns a function that stops serving (and closes the port).
 */
export function serveRepo(port: MessagePort, repo: object): () => void {
  const onMessage = async (msg: CallMessage) => {
    if (!msg || msg.kind !== 'repo-call') return;
    let reply: ReplyMessage;
    try {
      const fn = (repo as Record<string, unknown>)[msg.method];
      if (typeof fn !== 'function') throw new Error(`the repository has no method ${msg.method}`);
      const value = await (fn as (...a: unknown[]) => unknown).apply(repo, msg.args);
      reply = { kind: 'repo-reply', callId: msg.callId, ok: true, value };
    } catch (e) {
      reply = { kind: 'repo-reply', callId: msg.callId, ok: false, error: serializeError(e) };
    }
    try {
      port.postMessage(reply);
    } catch (e) {
      // The result could not be cloned (a function, a socket ...): say so rather than hang the caller.
      port.postMessage({
        kind: 'repo-reply', callId: msg.callId, ok: false,
        error: { name: 'Error', message: `result of repository method ${msg.method} cannot be sent to a worker thread: ${(e as Error).message}` },
      } satisfies ReplyMessage);
    }
  };
  port.on('message', onMessage);
  // The port alone must not keep the process alive; running jobs keep their thread referenced.
  port.unref();
  return () => { port.off('message', onMessage); port.close(); };
}

/**
 * An object whose every property is an async method forwarding to the
 * repository served on the other end of `port` (see `serveRepo`).
 */
export function createRepoProxy<R extends object = Record<string, (...args: any[]) => Promise<any>>>(port: MessagePort): R {
  let nextId = 1;
  const pending = new Map<number, { resolve(v: unknown): void; reject(e: Error): void }>();
  port.on('message', (msg: ReplyMessage) => {
    if (!msg || msg.kind !== 'repo-reply') return;
    const p = pending.get(msg.callId);
    if (!p) return;
    pending.delete(msg.callId);
    if (msg.ok) p.resolve(msg.value);
    else p.reject(reviveError(msg.error ?? { name: 'Error', message: 'unknown repository error' }));
  });
  const methods = new Map<string, (...args: unknown[]) => Promise<unknown>>();
  return new Proxy({} as R, {
    get(_target, prop) {
      // Not a thenable (so `await repo` does not hang) and no symbol protocols.
      if (typeof prop !== 'string' || prop === 'then') return undefined;
      let m = methods.get(prop);
      if (!m) {
        m = (...args: unknown[]) => new Promise((resolve, reject) => {
          const callId = nextId++;
          pending.set(callId, { resolve, reject });
          try {
            port.postMessage({ kind: 'repo-call', callId, method: prop, args } satisfies CallMessage);
          } catch (e) {
            pending.delete(callId);
            reject(new Error(`arguments of repository method ${prop} cannot be sent to the main thread: ${(e as Error).message}`));
          }
        });
        methods.set(prop, m);
      }
      return m;
    },
  });
}
