/**
 * Waiting for something that may never end (a connection closing while its
 * server is away, a worker thread blocked in a read), for a bounded time.
 */

/**
 * Whether `p` settled (resolved or rejected) within `ms`; resolves by then
 * either way, and its timer does not outlive it.
 */
export function settleWithin(p: Promise<unknown>, ms: number): Promise<boolean> {
  let t: NodeJS.Timeout | undefined;
  return Promise.race([p.then(() => true, () => true), new Promise<boolean>((res) => { t = setTimeout(() => res(false), ms); })])
    .finally(() => clearTimeout(t));
}
