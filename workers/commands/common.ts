/** Pieces the store-using commands share. */
import { InputError } from '../core/errors.js';
import { runtimeConfig, type RuntimeConfig } from '../run/config.js';
import type { Store } from '../store/index.js';

/**
 * Open the configured store for reading (the embedded database in --data-dir, or the server the store side is configured with), run `fn`, close.
 * An embedded store must exist (a mistyped --data-dir is an InputError, nothing is created) and is
 * read through its owner's socket while another process (an ingest) owns it.
 */
export async function withStore<T>(opts: { dataDir?: string }, fn: (store: Store, config: RuntimeConfig) => Promise<T>): Promise<T> {
  const config = runtimeConfig({ dataDir: opts.dataDir });
  const { openConfiguredStore } = await import('../store/configured.js');
  const store = await openConfiguredStore(config, { readOnly: true });
  try {
    return await fn(store, config);
  } finally {
    await store.close();
  }
}

/** The one-line caution printed under results (from the defaults module). */
export { CAUTION_SHORT_TEXT as CAUTION_SHORT } from '../core/defaults.js';

/** `--plausible min,max` (Kelvin) or `none`. */
export function parsePlausible(text: string): [number, number] | null {
  if (text === 'none') return null;
  const parts = text.split(',').map((s) => Number(s.trim()));
  if (parts.length !== 2 || !parts.every(Number.isFinite) || parts[0] >= parts[1]) {
    throw new InputError(`--plausible needs "min,max" in Kelvin with min < max (or "none"), got "${text}"`);
  }
  return [parts[0], parts[1]];
}
