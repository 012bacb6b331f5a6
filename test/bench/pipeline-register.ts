/**
 * `node --import dist/test/bench/pipeline-register.js ...`: time the
 * repository calls of this process (see pipeline-timing-repo.ts), through the
 * store's wrapper registration (`wrapPipelineRepos`), before any runner starts.
 * Worker threads of the process need nothing: their repository is a proxy
 * to the main thread, where the timed calls run.
 *
 * With BENCH_EXIT_WITH_PARENT=1 and an IPC channel to the bench, the process
 * also stops itself (SIGTERM, the graceful stop of `heatledger worker`, or an
 * immediate exit) when the bench goes away, so a killed bench leaves no worker behind.
 */
import { isMainThread } from 'node:worker_threads';
import { wrapPipelineRepos } from '../../workers/store/pipeline-repo.js';
import { timePipelineRepo } from './pipeline-timing-repo.js';

if (isMainThread) {
  wrapPipelineRepos(timePipelineRepo);
  if (process.send && process.env.BENCH_EXIT_WITH_PARENT === '1') {
    process.on('disconnect', () => {
      // a worker's own SIGTERM handler closes it gracefully; anything else (a starting or
      // stopping worker, the ingest command) just ends
      if (process.listenerCount('SIGTERM') > 0) process.kill(process.pid, 'SIGTERM');
      else process.exit(1);
    });
    // the channel alone must not keep the process alive
    process.channel?.unref();
  }
}
