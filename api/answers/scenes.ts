/**
 * GET /api/scenes and /api/scenes/{id}: each scene with its acquisition time
 * (UTC), pass, timing rating, sensor, state, the stored reason of a failure,
 * per district the valid fraction and why a value is missing, and for a
 * thermal (Level-1 DN) pass how its LST was made (the one description of
 * workers/core/thermal/describe.ts). Paths are relative to the data root
 * (workers/core/relative-paths.ts), never the server's own.
 */
import path from 'node:path';
import { InputError } from '../../workers/core/errors.js';
import { describeLstMethod } from '../../workers/core/thermal/describe.js';
import { PRECISION, roundNumber } from '../../workers/format.js';
import type { SceneKind, ScenePass, SceneStatus, Store } from '../../workers/store/index.js';
import { sceneListing, type SceneListingRow } from '../../workers/store/scene-listing.js';
import { commonDirectory, relativeInText, relativeToRoot } from '../../workers/core/relative-paths.js';
import { decodeCursor, encodeCursor, LIMIT_DEFAULT, noMemo, type AnswerContext, type Memo } from './common.js';

export interface ScenesQuery {
  state?: SceneStatus;
  kind?: SceneKind;
  pass?: ScenePass;
  /** First day (UTC, YYYY-MM-DD), inclusive. */
  from?: string;
  /** Last day (UTC, YYYY-MM-DD), inclusive. */
  to?: string;
  limit?: number;
  cursor?: string;
}

export interface SceneAnswerRow {
  id: number;
  /** Relative to the data root; a file outside it by its name alone. */
  file: string;
  acquired_at: string | null;
  pass: ScenePass | null;
  kind: SceneKind | null;
  sensor: string | null;
  timing_rating: string | null;
  state: SceneStatus;
  /** The stored reason of a failure, or null. */
  reason: string | null;
  warnings: string[];
  /** Thermal passes: 'rte' (radiative transfer equation inverted) or 'emissivity_only'; null for other kinds or before ingest decided. */
  lst_method: 'rte' | 'emissivity_only' | null;
  /** Thermal passes: whether the LST was corrected for the atmosphere; null for other kinds. */
  atmospheric_correction: boolean | null;
  thermal_constants_source: string | null;
  emissivity_source: string | null;
  /** Thermal passes: one sentence on how the LST was made; null for other kinds. */
  how_lst_was_made: string | null;
  /** A thermal pass without atmospheric correction: the typical size of the error it leaves; else null. */
  atmospheric_correction_note: string | null;
  districts: { district: string; valid_fraction: number | null; missing_reason: string | null }[];
}

/** The thermal fields of a scene row: paths in them relative to the root, as the scene's own file. */
function thermalFields(r: SceneListingRow, root: string | null): Pick<SceneAnswerRow, 'lst_method' | 'atmospheric_correction' | 'thermal_constants_source' | 'emissivity_source' | 'how_lst_was_made' | 'atmospheric_correction_note'> {
  if (r.kind !== 'thermal') {
    return { lst_method: null, atmospheric_correction: null, thermal_constants_source: null, emissivity_source: null, how_lst_was_made: null, atmospheric_correction_note: null };
  }
  const d = describeLstMethod({
    lstMethod: r.lst_method, atmosphericCorrection: r.atmospheric_correction, atmosphere: r.atmosphere,
    thermalConstantsSource: r.thermal_constants_source, emissivitySource: r.emissivity_source,
  });
  const rel = (t: string | null) => (t === null ? null : relativeInText(t, root));
  return {
    lst_method: d.lstMethod, atmospheric_correction: d.atmosphericCorrection, thermal_constants_source: rel(d.thermalConstantsSource),
    emissivity_source: rel(d.emissivitySource), how_lst_was_made: rel(d.howLstWasMade), atmospheric_correction_note: d.atmosphericCorrectionNote,
  };
}

export interface ScenesAnswer {
  next_cursor: string | null;
  rows: SceneAnswerRow[];
}

export interface SceneContext extends AnswerContext {
  /** Folder paths are shown relative to; default the common folder of the stored scenes. */
  dataRoot?: string;
}

/** The folder scene paths are shown relative to. */
export async function sceneRoot(store: Store, dataRoot: string | undefined, memo: Memo): Promise<string | null> {
  if (dataRoot !== undefined) return path.resolve(dataRoot);
  return memo('scene-root', async () => commonDirectory((await store.query<{ path: string }>('SELECT path FROM scenes')).map((r) => r.path)));
}

function sceneRow(r: SceneListingRow, root: string | null): SceneAnswerRow {
  const file = relativeToRoot(r.path, root);
  return {
    id: r.id, file, acquired_at: r.acquired_at, pass: r.pass, kind: r.kind, sensor: r.sensor, timing_rating: r.timing_rating, state: r.status,
    // the scene's own path first (it may hold blanks), then any other absolute path in the message
    reason: r.error === null ? null : relativeInText(r.error.split(r.path).join(file), root),
    warnings: r.warnings.map((w) => relativeInText(w.split(r.path).join(file), root)),
    ...thermalFields(r, root),
    districts: r.districts.map((d) => ({ district: d.district_id, valid_fraction: roundNumber(d.valid_fraction, PRECISION.fraction), missing_reason: d.missing_reason })),
  };
}

const isSceneCursor = (v: unknown): v is { a: string; i: number } =>
  !!v && typeof v === 'object' && typeof (v as { a?: unknown }).a === 'string' && Number.isSafeInteger((v as { i?: unknown }).i) &&
  ((v as { a: string }).a === 'infinity' || !Number.isNaN(Date.parse((v as { a: string }).a)));

/** The instant after the last day `to` (YYYY-MM-DD, UTC). */
function dayAfter(day: string): string {
  const d = new Date(`${day}T00:00:00Z`);
  d.setUTCDate(d.getUTCDate() + 1);
  return d.toISOString();
}

export async function answerScenes(store: Store, q: ScenesQuery, ctx: SceneContext = {}): Promise<ScenesAnswer> {
  const memo = ctx.memo ?? noMemo;
  if (q.from !== undefined && q.to !== undefined && q.from > q.to) throw new InputError(`query parameter from (${q.from}) is after to (${q.to})`);
  const limit = q.limit ?? LIMIT_DEFAULT;
  const after = q.cursor === undefined ? undefined : decodeCursor(q.cursor, isSceneCursor);
  const rows = await sceneListing(store, {
    status: q.state, kind: q.kind, pass: q.pass, from: q.from === undefined ? undefined : `${q.from}T00:00:00Z`,
    before: q.to === undefined ? undefined : dayAfter(q.to), after: after && { acquiredAt: after.a, id: after.i }, limit: limit + 1,
  });
  const page = rows.slice(0, limit);
  const last = page[page.length - 1];
  const root = await sceneRoot(store, ctx.dataRoot, memo);
  return {
    next_cursor: rows.length > limit && last ? encodeCursor({ a: last.acquired_at ?? 'infinity', i: last.id }) : null,
    rows: page.map((r) => sceneRow(r, root)),
  };
}

/** One scene; an unknown id is a 404. */
export async function answerScene(store: Store, id: number, ctx: SceneContext = {}): Promise<SceneAnswerRow> {
  const [row] = await sceneListing(store, { id, limit: 1 });
  if (!row) throw new UnknownSceneError(id);
  return sceneRow(row, await sceneRoot(store, ctx.dataRoot, ctx.memo ?? noMemo));
}

export class UnknownSceneError extends InputError {
  readonly statusCode = 404;
  constructor(id: number) {
    super(`no scene with id ${id} in the store; GET /api/scenes lists them`);
  }
}
