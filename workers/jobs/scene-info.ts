/**
 * What a scene header says about the scene, beyond the raster itself: its kind,
 * acquisition time, where its centre is on the globe, and from those the sun's
 * elevation, day/night pass and timing rating.
 */
import { basename } from 'node:path';
import { pixelSize, pixelToMap } from '../core/raster/affine.js';
import type { RasterHeader } from '../core/raster/index.js';
import { crsDefinitionForEpsg, isGeographic, makeTransformer } from '../core/crs/index.js';
import { classifyPass, rateTiming, type TimingRating } from '../core/solar/index.js';
import { rasterCrs } from '../core/raster/index.js';
import { SCENE_KINDS, type ManifestEntry, type SceneKind } from './archive.js';

/** Kind of a scene: the manifest, then the caller's default, then a KIND metadata item, then the file name; else 'lst'. */
export function sceneKind(header: RasterHeader, manifest: ManifestEntry | undefined, defaultKind: SceneKind | undefined): SceneKind {
  if (manifest?.kind) return manifest.kind;
  if (defaultKind) return defaultKind;
  const meta = (header.metadata.KIND ?? header.metadata.kind ?? '').toLowerCase();
  if ((SCENE_KINDS as readonly string[]).includes(meta)) return meta as SceneKind;
  const name = basename(header.path).toLowerCase();
  if (/albedo/.test(name)) return 'albedo';
  if (/(^|[_.-])qa([_.-]|$)/.test(name)) return 'qa';
  return 'lst';
}

/** Lon/lat (WGS 84) of the raster's centre. */
export function sceneCentreLonLat(header: RasterHeader): [number, number] {
  const def = rasterCrs(header);
  const [x, y] = pixelToMap(header.transform, header.width / 2, header.height / 2);
  if (isGeographic(def)) return [x, y];
  return makeTransformer(def, crsDefinitionForEpsg(4326))(x, y);
}

export interface SceneTiming {
  acquiredAt: string | null;
  pass: 'day' | 'night' | null;
  sunElevationDeg: number | null;
  solarTimeHours: number | null;
  timingRating: TimingRating | null;
}

/** Pass and timing of an acquisition at the scene centre; nulls when there is no time. */
export function sceneTiming(acquiredAt: string | null, lon: number, lat: number, dayElevationDeg = 0): SceneTiming {
  if (!acquiredAt) return { acquiredAt: null, pass: null, sunElevationDeg: null, solarTimeHours: null, timingRating: null };
  const t = new Date(acquiredAt);
  const rating = rateTiming(t, lat, lon);
  return {
    acquiredAt,
    pass: classifyPass(t, lat, lon, { dayElevationDeg }),
    sunElevationDeg: rating.sunElevationDeg,
    solarTimeHours: rating.localSolarHours >= 24 ? 0 : rating.localSolarHours,
    timingRating: rating.rating,
  };
}

/** Pixel size in metres, when the CRS is projected in metres (null for degrees). */
export function pixelSizeMetres(header: RasterHeader): number | null {
  const def = header.crsDefinition ?? '';
  if (!def || isGeographic(def)) return null;
  const s = pixelSize(header.transform);
  const toMetre = /\+to_meter=([0-9.eE+-]+)/.exec(def);
  const unit = toMetre ? Number(toMetre[1]) : /\+units=(us-)?ft/.test(def) ? (/us-ft/.test(def) ? 1200 / 3937 : 0.3048) : 1;
  return Math.sqrt(s.x * s.y) * unit;
}
