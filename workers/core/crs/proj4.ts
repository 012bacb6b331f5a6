/**
 * proj4, loaded with `require`: the package's entry is a CommonJS bundle, and
 * importing it from ESM makes Node scan the whole bundle for export names
 * (~30-50 ms of every command's start-up).
 */
import { createRequire } from 'node:module';
import type proj4Type from 'proj4';

const requireCjs = createRequire(import.meta.url);
const loaded = requireCjs('proj4') as typeof proj4Type & { default?: typeof proj4Type };
export const proj4: typeof proj4Type = loaded.default ?? loaded;
export type { Converter } from 'proj4';
