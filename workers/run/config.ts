/** Where a run's jobs and results go: the queue side's mode and the store side's location, each decided on its own side. */
import { queueConfig, type QueueConfig } from '../queue/configured.js';
import { storeConfig, type StoreConfig } from '../store/configured.js';

export type RuntimeConfig = QueueConfig & StoreConfig;

/** Resolve where the store and queue live, from options (first) and the environment. */
export function runtimeConfig(options: { dataDir?: string } = {}, env: NodeJS.ProcessEnv = process.env): RuntimeConfig {
  return { ...queueConfig(env), ...storeConfig(options, env) };
}
