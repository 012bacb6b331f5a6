/**
 * JSON Schemas of the routes: query parameters, path parameters and response
 * bodies. Fastify validates requests and serialises responses with them, and
 * the OpenAPI document (/api/openapi.json) is generated from the same objects.
 *
 * Query parameters arrive as text and are never coerced: numbers are declared
 * as strings of decimal digits (a pattern) and read by the route with their
 * range checked, so "0x7e4" or "1e3" cannot pass for a number.
 */
import { LIMIT_MAX, METRICS, SEASONS } from './answers/common.js';

const text = (description: string, pattern: string) => ({ type: 'string', pattern, description }) as const;

export const YEAR_DESCRIPTION = 'a year written in decimal digits from 1950 to 2100';
export const LIMIT_DESCRIPTION = `a whole number from 1 to ${LIMIT_MAX} in decimal digits`;

/** The query parameters the routes share. */
export const Q = {
  year: text(YEAR_DESCRIPTION, '^[0-9]{4}$'),
  from: text(`first ${YEAR_DESCRIPTION}`, '^[0-9]{4}$'),
  to: text(`last ${YEAR_DESCRIPTION}`, '^[0-9]{4}$'),
  metric: { type: 'string', enum: [...METRICS], default: 'suhi_night', description: 'lst_day, lst_night (K), suhi_day, suhi_night (K, district minus rural reference), ati (1/K)' },
  season: { type: 'string', enum: [...SEASONS], default: 'all', description: 'months of the year kept (hemisphere from the stored districts); all = every month' },
  limit: text(LIMIT_DESCRIPTION, '^[0-9]{1,9}$'),
  cursor: text('next_cursor of the previous page', '^[A-Za-z0-9_-]{1,400}$'),
  alpha: text('a significance level written as a decimal fraction from 0.001 to 0.5, e.g. 0.05', '^0?\\.[0-9]{1,6}$'),
  serial_correction: { type: 'string', enum: ['none', 'hamed-rao'], description: 'none, or the Hamed–Rao (1998) variance correction for serial correlation' },
  format: { type: 'string', enum: ['json', 'csv'] },
  day: (what: string) => text(`${what} day, UTC, as YYYY-MM-DD`, '^[0-9]{4}-[0-9]{2}-[0-9]{2}$'),
  boolean: (description: string) => ({ type: 'string', enum: ['true', 'false'], description }) as const,
} as const;

/** A query schema: the listed parameters, none required, nothing else accepted. */
export function querySchema(properties: Record<string, unknown>, required: string[] = []) {
  return { type: 'object', properties, required, additionalProperties: false } as const;
}

const num = { type: ['number', 'null'] } as const;
const int = { type: ['integer', 'null'] } as const;
const str = { type: ['string', 'null'] } as const;
const obj = (properties: Record<string, unknown>, required = Object.keys(properties)) => ({ type: 'object', properties, required, additionalProperties: false }) as const;
const arr = (items: unknown) => ({ type: 'array', items }) as const;
const cursor = { type: ['string', 'null'], description: 'pass as cursor to get the next page; null on the last page' } as const;

/** An error body: one sentence naming the parameter and what it accepts; a year without values also lists those with values. */
export const ERROR_BODY = obj({
  error: { type: 'string' },
  years: { ...arr({ type: 'integer' }), description: 'on a year that has no values: the years that have values' },
}, ['error']);

export const UNITS_BODY = obj({ lst_day_k: { type: 'string' }, lst_night_k: { type: 'string' }, suhi_day_k: { type: 'string' }, suhi_night_k: { type: 'string' }, ati_per_k: { type: 'string' } });

const GEOMETRY = { type: 'object', additionalProperties: true, description: 'GeoJSON geometry (RFC 7946), lon/lat WGS 84' } as const;

export const HEALTH_BODY = obj({
  ok: { type: 'boolean' }, store: { type: 'string', enum: ['pg', 'pglite'] }, schema_version: { type: 'integer' }, version: { type: 'string' },
  last_run: { anyOf: [{ type: 'null' }, obj({ id: { type: 'integer' }, state: { type: 'string' }, finished_at: { type: 'string' } })] },
  years: arr({ type: 'integer' }),
});

const METRIC_VALUES = { lst_day_k: num, lst_night_k: num, suhi_day_k: num, suhi_night_k: num, ati_per_k: num };

export const DISTRICTS_BODY = obj({
  type: { type: 'string', enum: ['FeatureCollection'] }, year: int, season: { type: 'string' }, metric: { type: 'string' }, years: arr({ type: 'integer' }),
  units: UNITS_BODY, caution: { type: 'string' }, next_cursor: cursor,
  features: arr(obj({
    type: { type: 'string', enum: ['Feature'] }, id: { type: 'string' }, geometry: GEOMETRY,
    properties: obj({
      id: { type: 'string' }, name: { type: 'string' }, role: { type: 'string', enum: ['district', 'rural'] }, area_m2: { type: 'number' },
      ...METRIC_VALUES, dates_day: { type: 'integer' }, dates_night: { type: 'integer' }, value: num,
    }),
  })),
});

export const DISTRICT_BODY = obj({
  id: { type: 'string' }, name: { type: 'string' }, role: { type: 'string', enum: ['district', 'rural'] }, area_m2: { type: 'number' },
  geometry: GEOMETRY, properties: { type: 'object', additionalProperties: true }, years: arr({ type: 'integer' }),
});

const DIRECTION = { type: ['string', 'null'], enum: ['increasing', 'decreasing', 'none', null] } as const;
const TREND_FIELDS = {
  n: { type: 'integer' }, s: num, var_s: num, z: num, p: num, q: num, tau: num,
  slope_per_year: num, slope_per_decade: num, slope_ci_lower: num, slope_ci_upper: num, slope_ci_lower_per_decade: num, slope_ci_upper_per_decade: num,
  pivot_year: num, pivot_value: num, direction: DIRECTION, direction_raw: DIRECTION, z_corrected: num, p_corrected: num,
  alpha: { type: 'number' }, districts_tested: { type: 'integer' }, years_used: { type: 'string' }, dates_per_year: { type: 'string' }, note: str,
};

export const SERIES_BODY = obj({
  district: obj({ id: { type: 'string' }, name: { type: 'string' } }), metric: { type: 'string' }, season: { type: 'string' },
  unit: { type: 'string', enum: ['K', '1/K'] }, min_dates_per_year: { type: 'integer' },
  points: arr(obj({ year: { type: 'integer' }, value: { type: 'number' }, dates: { type: 'integer' }, in_trend: { type: 'boolean' }, dates_list: arr({ type: 'string' }) }, ['year', 'value', 'dates', 'in_trend'])),
  trend: obj(TREND_FIELDS),
});

export const TRENDS_BODY = obj({
  metric: { type: 'string' }, season: { type: 'string' }, alpha: { type: 'number' }, serial_correction: { type: 'string' }, unit: { type: 'string', enum: ['K', '1/K'] },
  districts_tested: { type: 'integer' }, next_cursor: cursor,
  rows: arr(obj({ district: { type: 'string' }, name: { type: 'string' }, ...TREND_FIELDS })),
});

export const RANKINGS_BODY = obj({
  year: int, previous_year: int, metric: { type: 'string' }, season: { type: 'string' }, unit: { type: 'string', enum: ['K', '1/K'] }, order: { type: 'string', enum: ['desc', 'asc'] },
  next_cursor: cursor,
  rows: arr(obj({ rank: { type: 'integer' }, district: { type: 'string' }, name: { type: 'string' }, value: { type: 'number' }, previous_rank: int, rank_change: int })),
});

export const HOTSPOTS_BODY = obj({
  year: int, metric: { type: 'string' }, season: { type: 'string' }, unit: { type: 'string', enum: ['K', '1/K'] }, weights: { type: 'string' }, fdr: { type: 'boolean' },
  min_dates_per_year: { type: 'integer' }, left_out: arr({ type: 'string' }),
  moran: { anyOf: [{ type: 'null' }, obj({ i: { type: 'number' }, expected: { type: 'number' }, z: { type: 'number' }, p: { type: 'number' }, islands: { type: 'integer' } })] },
  rows: arr(obj({
    district: { type: 'string' }, name: { type: 'string' }, value: { type: 'number' }, gi_z: num, gi_p: num, gi_q: num,
    spot: { type: 'string', enum: ['hot', 'cold', 'none'] }, confidence: { type: ['integer', 'null'], enum: [99, 95, 90, null] },
  })),
});

/** How a thermal (Level-1 DN) pass's LST was made; null for other kinds of scene. */
const THERMAL_FIELDS = {
  lst_method: { type: ['string', 'null'], enum: ['rte', 'emissivity_only', null], description: 'thermal passes: rte = radiative transfer equation inverted with the scene\'s atmosphere; emissivity_only = emissivity correction alone' },
  atmospheric_correction: { type: ['boolean', 'null'], description: 'thermal passes: whether the LST was corrected for the atmosphere' },
  thermal_constants_source: { ...str, description: 'thermal passes: where the rescaling and thermal constants came from' },
  emissivity_source: { ...str, description: 'thermal passes: where the surface emissivity came from' },
  how_lst_was_made: { ...str, description: 'thermal passes: one sentence on how the LST was made' },
  atmospheric_correction_note: { ...str, description: 'a thermal pass without atmospheric correction: the typical size of the error this leaves' },
} as const;

export const SCENE_BODY = obj({
  id: { type: 'integer' }, file: { type: 'string', description: 'relative to the data root' }, acquired_at: str, pass: str, kind: str, sensor: str, timing_rating: str,
  state: { type: 'string', enum: ['registered', 'processed', 'failed'] }, reason: str, warnings: arr({ type: 'string' }),
  ...THERMAL_FIELDS,
  districts: arr(obj({ district: { type: 'string' }, valid_fraction: num, missing_reason: str })),
});

export const SCENES_BODY = obj({ next_cursor: cursor, rows: arr(SCENE_BODY) });

const TABLE_ROW = {
  type: 'object', additionalProperties: false,
  properties: {
    district: { type: 'string' }, name: { type: 'string' }, date: { type: 'string' }, year: { type: 'integer' }, dates: { type: 'integer' },
    ...METRIC_VALUES, day_scenes: { type: 'integer' }, night_scenes: { type: 'integer' },
  },
} as const;

export const TABLE_BODY = obj({ level: { type: 'string', enum: ['date', 'year'] }, units: UNITS_BODY, caution: { type: 'string' }, rows: arr(TABLE_ROW) });

export const STATUS_BODY = obj({
  scenes: { type: 'object', additionalProperties: { type: 'integer' } },
  failures: arr({ type: 'object', additionalProperties: true }),
  thermal_scenes: arr(obj({
    scene_id: { type: 'integer' }, path: { type: 'string', description: 'relative to the data root' }, acquired_at: str, pass: str,
    status: { type: 'string' }, ...THERMAL_FIELDS, how_lst_was_made: { type: 'string', description: 'one sentence on how the LST was made' },
  })),
});

const JOB_ID_FIELD = { type: 'string', description: 'the job id, as POST /api/ingest answered it' } as const;

export const JOB_BODY = obj({
  job_id: JOB_ID_FIELD, id: { type: 'string', description: 'the same as job_id (kept for earlier clients)' }, state: { type: 'string', enum: ['queued', 'running', 'succeeded', 'incomplete', 'failed'] },
  scenes_asked: { type: 'integer' }, scenes_done: { type: 'integer' }, scenes_failed: { type: 'integer' }, run_id: int, errors: arr({ type: 'string' }),
});

export const INGEST_BODY = obj({ job_id: JOB_ID_FIELD });

export const INGEST_REQUEST = {
  type: 'object', additionalProperties: false, required: ['files'],
  properties: {
    files: {
      type: 'array', minItems: 1, maxItems: 1000, description: 'scene files under the data root (relative to it, or absolute inside it)',
      items: { type: 'string', minLength: 1, maxLength: 1024 },
    },
    districts: { type: 'string', minLength: 1, maxLength: 1024, description: 'the district GeoJSON under the data root; default districts.geojson in it' },
  },
} as const;
