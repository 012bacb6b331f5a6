/**
 * What the API keeps between requests: every answer depends only on what the
 * store holds, which changes only when a run ends. The tag of the run that
 * finished last (the response's ETag) keys everything kept here; a new tag
 * drops it all.
 *
 * Two levels: computed values (a district list, a season's means, a trend
 * table) shared by several routes, and whole response bodies by URL.
 */
import type { Memo } from './answers/common.js';

/** Bodies kept at most (a city's routes × parameter combinations); beyond it the oldest go. */
const MAX_BODIES = 5000;

export interface KeptBody {
  contentType: string;
  payload: string;
}

export class RunCache {
  private tag: string | null = null;
  private readonly values = new Map<string, Promise<unknown>>();
  private readonly bodies = new Map<string, KeptBody>();

  /** Move to `tag`, forgetting everything kept under another one. */
  private use(tag: string): void {
    if (tag === this.tag) return;
    this.tag = tag;
    this.values.clear();
    this.bodies.clear();
  }

  /** The memo of answers computed under `tag`: a value is computed once, concurrent callers share it. */
  memo(tag: string): Memo {
    this.use(tag);
    return <T>(key: string, compute: () => Promise<T>): Promise<T> => {
      if (this.tag !== tag) return compute(); // a newer run ended while this request ran: keep nothing of it
      let p = this.values.get(key) as Promise<T> | undefined;
      if (!p) {
        p = compute();
        this.values.set(key, p);
        // a failure is not kept: the next request tries again
        p.catch(() => { if (this.values.get(key) === p) this.values.delete(key); });
      }
      return p;
    };
  }

  body(tag: string, url: string): KeptBody | undefined {
    return tag === this.tag ? this.bodies.get(url) : undefined;
  }

  keepBody(tag: string, url: string, body: KeptBody): void {
    if (tag !== this.tag) return;
    if (this.bodies.size >= MAX_BODIES) this.bodies.delete(this.bodies.keys().next().value as string);
    this.bodies.set(url, body);
  }
}

declare module 'fastify' {
  interface FastifyRequest {
    /** Tag of the store's last run when the request arrived (its ETag). */
    runTag: string;
    /** The memo of answers under that tag. */
    memo: Memo;
  }
  interface FastifyContextConfig {
    /** Keep this route's 200 bodies by URL while the last run stays the same. */
    cacheBody?: boolean;
  }
}

/**
 * Shares one read among the callers that asked while it was waiting to start,
 * never one that had started before a caller asked: a caller always gets a
 * value read after its call (so a run that ended before a request is seen by
 * it), while concurrent callers cost at most two reads in flight instead of one
 * each. The embedded engine runs queries one at a time on the server's thread,
 * where this matters under load.
 */
export function freshRead<T>(read: () => Promise<T>): () => Promise<T> {
  let running: Promise<T> | null = null;
  let queued: Promise<T> | null = null;
  const start = (): Promise<T> => {
    const p = read();
    running = p;
    const clear = () => { if (running === p) running = null; };
    p.then(clear, clear);
    return p;
  };
  return () => {
    if (running === null) return start();
    if (queued === null) {
      const after = running.then(() => undefined, () => undefined);
      queued = after.then(() => {
        queued = null;
        return start();
      });
    }
    return queued;
  };
}
