/**
 * Progress of long work (scene generation, ingest), one way for every command:
 * a bar on a terminal (cli-progress), and plain lines when the stream is not a
 * terminal (a log file, CI, a pipe) — one line each time another tenth of the
 * work is done, or after `everyMs` without a line, and a last line at the end:
 *   `scenes: 40/170 done (24 %), failed 0, 3.1 scenes/s`
 */
import { Presets, SingleBar } from 'cli-progress';

export interface ProgressOptions {
  /** What is counted, e.g. "scenes"; the first word of every line. */
  label: string;
  total: number;
  /** Where it goes; default standard error. */
  stream?: NodeJS.WritableStream & { isTTY?: boolean };
  /** Bar or lines; default: a bar when the stream is a terminal. */
  tty?: boolean;
  /** Plain lines: at most this long without one while work goes on; default 10 s. */
  everyMs?: number;
}

export interface Progress {
  /** `done` of the total so far (the total may change), with optional text after the counts. */
  update(done: number, detail?: string, total?: number): void;
  /** The last state, once; the bar is closed. */
  stop(): void;
}

/** Start showing progress. */
export function startProgress(options: ProgressOptions): Progress {
  const stream = options.stream ?? process.stderr;
  const tty = options.tty ?? !!stream.isTTY;
  let total = options.total;
  if (tty) {
    const bar = new SingleBar({
      format: `${options.label} {bar} {value}/{total} done | {detail}`,
      stream: stream as NodeJS.WritableStream,
      hideCursor: true,
    }, Presets.shades_classic);
    let started = false;
    return {
      update(done, detail = '', newTotal) {
        if (newTotal !== undefined && newTotal !== total) { total = newTotal; if (started) bar.setTotal(total); }
        if (!started) { bar.start(total, done, { detail }); started = true; }
        bar.update(done, { detail });
      },
      stop() { if (started) bar.stop(); started = false; },
    };
  }
  const everyMs = options.everyMs ?? 10_000;
  let lastLineAt = Date.now();
  let lastDone = -1;
  let lastTenth = -1;
  let last: { done: number; detail: string } | null = null;
  const line = (done: number, detail: string) => {
    const pct = total > 0 ? Math.floor((100 * done) / total) : 100;
    stream.write(`${options.label}: ${done}/${total} done (${pct} %)${detail ? `, ${detail}` : ''}\n`);
    lastLineAt = Date.now();
    lastDone = done;
  };
  return {
    update(done, detail = '', newTotal) {
      if (newTotal !== undefined) total = newTotal;
      last = { done, detail };
      const tenth = total > 0 ? Math.floor((10 * done) / total) : 10;
      if (lastDone < 0 || (done !== lastDone && (tenth > lastTenth || Date.now() - lastLineAt >= everyMs))) {
        line(done, detail);
        lastTenth = Math.max(lastTenth, tenth);
      }
    },
    stop() {
      if (last && last.done !== lastDone) line(last.done, last.detail);
      last = null;
    },
  };
}
