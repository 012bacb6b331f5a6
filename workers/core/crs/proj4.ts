/**
 * proj4, loaded with `require` on first use: the package's entry is a
 * CommonJS bundle (importing it from ESM makes Node scan the whole bundle for
 * export names), and compiling it costs ~30-60 ms of CPU, which a command
 * reprojecting only into WGS 84 UTM zones never pays (see utm.ts).
 */
import { createRequire } from 'node:module';
import type proj4Type from 'proj4';

const requireCjs = createRequire(import.meta.url);
let loaded: typeof proj4Type | null = null;

/** The proj4 function (loaded on the first call). */
export function loadProj4(): typeof proj4Type {
  if (!loaded) {
    const m = requireCjs('proj4') as typeof proj4Type & { default?: typeof proj4Type };
    loaded = m.default ?? m;
  }
  return loaded;
}
export type { Converter } from 'proj4';
