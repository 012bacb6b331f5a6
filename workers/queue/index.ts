/** Job runners: embedded (in-process, worker threads) and distributed (BullMQ). */
export type { JobContext, Processor, JobSpec, Runner, FlowResult, FlowProgress, JobFailure, RunFlowOptions, ProcessorsModule } from './types.js';
export { createInProcessRunner, type InProcessRunnerOptions } from './in-process.js';
export { createBullRunner, startWorker, type BullRunnerOptions, type StartWorkerOptions, type WorkerHandle } from './bull.js';
export { deriveJobId, flattenTree } from './tree.js';
export { createRepoProxy, serveRepo } from './repo-proxy.js';
export * from './settings.js';
