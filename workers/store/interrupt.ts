/**
 * What to do on SIGINT / SIGTERM. Parts that hold something (a run in
 * progress, an open store, an HTTP server) register a handler; the command
 * line runs them newest first (the run is marked before its store closes),
 * prints the lines they return and exits.
 */
export interface InterruptOutcome {
  /** One line for stderr (without the "heatledger: " prefix). */
  message?: string;
  /** Exit code when the stop is the normal end of the command (a server: 0); default 128 + signal number. */
  exitCode?: number;
  /**
   * Something this handler started could not be stopped: a worker thread whose job
   * is blocked in a read that never returns (a hung network mount, a pipe). Node's
   * exit waits for every worker thread to end, so the process then ends by the
   * signal's own default action instead (a shell reports the same 130 or 143).
   */
  stuck?: boolean;
}

export type InterruptHandler = (signal: NodeJS.Signals) => Promise<InterruptOutcome | void>;

const handlers: InterruptHandler[] = [];

/** Register `fn`; returns the function that unregisters it. */
export function onInterrupt(fn: InterruptHandler): () => void {
  handlers.push(fn);
  return () => {
    const i = handlers.lastIndexOf(fn);
    if (i >= 0) handlers.splice(i, 1);
  };
}

/** Run every handler, newest first; a failing handler becomes a message and does not stop the others. */
export async function runInterruptHandlers(signal: NodeJS.Signals): Promise<{ messages: string[]; exitCode: number | null; stuck: boolean }> {
  const messages: string[] = [];
  let exitCode: number | null = null;
  let stuck = false;
  for (const fn of [...handlers].reverse()) {
    try {
      const out = await fn(signal);
      if (out?.message) messages.push(out.message);
      if (out?.exitCode !== undefined) exitCode = exitCode === null ? out.exitCode : Math.max(exitCode, out.exitCode);
      if (out?.stuck) stuck = true;
    } catch (e) {
      messages.push(`while stopping: ${(e as Error)?.message ?? String(e)}`);
    }
    const i = handlers.lastIndexOf(fn);
    if (i >= 0) handlers.splice(i, 1);
  }
  return { messages, exitCode, stuck };
}
