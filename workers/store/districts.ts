/** The districts table: district and rural-reference polygons. */
import type { SquareMetres, UtcIso } from '../core/units.js';
import { type Db, BATCH_ROWS, num, json } from './db.js';

/** GeoJSON geometry object (RFC 7946), lon/lat. */
export interface GeoJsonGeometry {
  type: string;
  coordinates?: unknown;
  geometries?: unknown;
}

export interface DistrictInput {
  id: string;
  name: string;
  /** 'rural' marks the rural reference polygon of SUHI; default 'district'. */
  role?: 'district' | 'rural';
  /** A GeoJSON geometry, or bare MultiPolygon coordinates (as `District.geometry` carries them). */
  geometry: GeoJsonGeometry | number[][][][];
  areaSquareMetres: SquareMetres;
  properties?: Record<string, unknown>;
}

export interface DistrictRow {
  id: string;
  name: string;
  role: 'district' | 'rural';
  geometry: GeoJsonGeometry;
  areaSquareMetres: SquareMetres;
  properties: Record<string, unknown>;
  updatedAt: UtcIso;
}

/**
 * Insert or update districts by id (a row whose content is unchanged keeps its
 * updated_at). Districts absent from `districts` are left alone: their history
 * stays. Returns the number of rows given.
 */
export async function upsertDistricts(db: Db, districts: DistrictInput[]): Promise<number> {
  for (let start = 0; start < districts.length; start += BATCH_ROWS) {
    const batch = districts.slice(start, start + BATCH_ROWS);
    await db.query(
      `INSERT INTO districts (id, name, role, geometry, area_m2, properties)
       SELECT id, name, role, geometry::jsonb, area_m2, properties::jsonb
       FROM unnest($1::text[], $2::text[], $3::text[], $4::text[], $5::double precision[], $6::text[])
            AS t(id, name, role, geometry, area_m2, properties)
       ON CONFLICT (id) DO UPDATE SET
         name = EXCLUDED.name, role = EXCLUDED.role, geometry = EXCLUDED.geometry,
         area_m2 = EXCLUDED.area_m2, properties = EXCLUDED.properties, updated_at = now()
       WHERE (districts.name, districts.role, districts.geometry, districts.area_m2, districts.properties)
             IS DISTINCT FROM (EXCLUDED.name, EXCLUDED.role, EXCLUDED.geometry, EXCLUDED.area_m2, EXCLUDED.properties)`,
      [
        batch.map((d) => d.id),
        batch.map((d) => d.name),
        batch.map((d) => d.role ?? 'district'),
        batch.map((d) => json(Array.isArray(d.geometry) ? { type: 'MultiPolygon', coordinates: d.geometry } : d.geometry)),
        batch.map((d) => num(d.areaSquareMetres, `district ${d.id} areaSquareMetres`)),
        batch.map((d) => json(d.properties)),
      ],
    );
  }
  return districts.length;
}

/** Every district (including the rural reference), ordered by id (byte order). */
export function listDistricts(db: Db): Promise<DistrictRow[]> {
  return db.query<DistrictRow>(
    `SELECT id, name, role, geometry, area_m2 AS "areaSquareMetres", properties, updated_at AS "updatedAt"
     FROM districts ORDER BY id COLLATE "C"`,
  );
}
