/**
 * A synthetic district store generated inside the database with generate_series
 * (one statement per table; nothing passes through JavaScript): `districts`
 * districts and one rural reference, a day and a night LST scene every day for
 * `years` years, one zonal row per scene and district (the district-pass rows)
 * and one derived row per district and date. Values are a smooth seasonal
 * cycle plus a district offset and deterministic noise (a hash of the row's
 * indices, so PostgreSQL and PGlite make the same store); one district-pass in
 * 13 has no valid pixels (cloud) and one date in 17 has no night pass paired.
 * Invented data for timing and for comparing query plans; no value here is an
 * expected result.
 */
export interface BigStoreShape {
  districts: number;
  years: number;
  /** First calendar year (UTC). */
  firstYear: number;
}

/** The 1,000 districts × 10 years × 2 passes a day store (~7.3 million district-pass rows). */
export const BIG_STORE: BigStoreShape = { districts: 1000, years: 10, firstYear: 2015 };

/** The SQL statements that fill an empty, migrated store, in order. */
export function bigStoreStatements(shape: BigStoreShape): string[] {
  const { districts, years, firstYear } = shape;
  if (!(Number.isInteger(districts) && districts > 0 && Number.isInteger(years) && years > 0 && Number.isInteger(firstYear))) {
    throw new Error(`big store: districts, years and firstYear must be whole numbers, got ${JSON.stringify(shape)}`);
  }
  const first = `'${firstYear}-01-01'::date`;
  const last = `'${firstYear + years}-01-01'::date - 1`;
  // noise in [0, 1) from two integers: fractional part of a scaled sine (a common shader hash; common practice, no source)
  const noise = (a: string, b: string) => `(abs(sin((${a}) * 12.9898 + (${b}) * 78.233) * 43758.5453)::numeric % 1)::double precision`;
  // district index 0 is the rural reference
  const lst = (i: string, k: string, night: string) =>
    `(300 + 9 * sin(2 * pi() * ((${k}) - 100) / 365.25) + CASE WHEN ${night} THEN -7 ELSE 6 END` +
    ` + CASE WHEN (${i}) = 0 THEN 0 ELSE 1.5 + ((${i}) % 37) * 0.05 END + 2 * (${noise(i, `(${k}) * 2 + CASE WHEN ${night} THEN 1 ELSE 0 END`)} - 0.5))`;
  const cloudy = (i: string, k: string, night: string) => `((${i}) * 7 + (${k}) * 2 + CASE WHEN ${night} THEN 1 ELSE 0 END) % 13 = 0`;
  return [
    `INSERT INTO districts (id, name, role, geometry, area_m2)
     SELECT CASE WHEN i = 0 THEN 'rural' ELSE 'd' || lpad(i::text, 5, '0') END,
            CASE WHEN i = 0 THEN 'Rural ring' ELSE 'District ' || i END,
            CASE WHEN i = 0 THEN 'rural' ELSE 'district' END,
            jsonb_build_object('type', 'Polygon', 'coordinates',
              jsonb_build_array(jsonb_build_array(jsonb_build_array(i * 0.01, 0), jsonb_build_array(i * 0.01 + 0.01, 0),
                                                  jsonb_build_array(i * 0.01 + 0.01, 0.01), jsonb_build_array(i * 0.01, 0)))),
            1000000 + i
     FROM generate_series(0, ${districts}) AS i`,
    `INSERT INTO runs (software_version, mode, status, finished_at) VALUES ('big-store', 'embedded', 'succeeded', now())`,
    `INSERT INTO scenes (content_hash, path, kind, sensor, acquired_at, pass, sun_elevation_deg, solar_time_hours, timing_rating,
                         epsg, width, height, pixel_size_m, scale, add_offset, nodata, status, run_id, processed_at)
     SELECT encode(sha256(convert_to(d::text || p.pass, 'UTF8')), 'hex'),
            '/archive/' || to_char(d, 'YYYY/MM/DD') || '_' || p.pass || '.tif', 'lst', 'synthetic',
            d + p.at, p.pass, p.sun, p.solar, p.rating, 32630, 1000, 1000, 70, 0.00341802, 149, 0, 'processed',
            (SELECT max(id) FROM runs), d + p.at + interval '1 hour'
     FROM generate_series(${first}, ${last}, interval '1 day') AS d,
          (VALUES ('day', interval '10 hours 30 minutes', 48.0, 10.7, 'midday'),
                  ('night', interval '21 hours 30 minutes', -20.0, 21.7, 'other')) AS p(pass, at, sun, solar, rating)
     ORDER BY d, p.pass`,
    `INSERT INTO zonal_stats (scene_id, district_id, pixels, valid, valid_fraction, mean_k, std_k, min_k, max_k, median_k, p10_k, p90_k,
                              nodata_count, masked_count, implausible_count, coverage_rule, run_id)
     SELECT s.id, d.id, 400, v.valid, v.valid / 400.0,
            CASE WHEN v.valid > 0 THEN v.t END, CASE WHEN v.valid > 0 THEN 1.2 END,
            CASE WHEN v.valid > 0 THEN v.t - 3 END, CASE WHEN v.valid > 0 THEN v.t + 3 END,
            CASE WHEN v.valid > 0 THEN v.t END, CASE WHEN v.valid > 0 THEN v.t - 1.5 END, CASE WHEN v.valid > 0 THEN v.t + 1.5 END,
            400 - v.valid, 0, 0, 'centre', s.run_id
     FROM scenes s
     CROSS JOIN LATERAL (SELECT (s.acquired_at::date - ${first}) AS k, s.pass = 'night' AS night) AS sk
     CROSS JOIN districts d
     CROSS JOIN LATERAL (SELECT CASE WHEN d.role = 'rural' THEN 0 ELSE substr(d.id, 2)::integer END AS i) AS di
     CROSS JOIN LATERAL (SELECT CASE WHEN ${cloudy('di.i', 'sk.k', 'sk.night')} THEN 0
                                     ELSE 200 + floor(200 * ${noise('di.i + 1', 'sk.k')})::integer END AS valid,
                                ${lst('di.i', 'sk.k', 'sk.night')} AS t) AS v`,
    // statistics for the planner before the joins below
    'ANALYZE scenes',
    'ANALYZE zonal_stats',
    // one derived row per district and date: the day pass with the night pass of that evening
    // (none on one date in 17), SUHI against the rural row of the same scenes, ATI with albedo 0.15
    `INSERT INTO derived_metrics (obs_date, district_id, day_scene_id, night_scene_id, albedo_source, t_day_k, t_night_k, albedo,
                                  ati_per_k, suhi_day_k, suhi_night_k, status, reason, run_id)
     SELECT sd.acquired_at::date, zd.district_id, sd.id, CASE WHEN paired THEN sn.id END, 'property',
            zd.mean_k, CASE WHEN paired THEN zn.mean_k END, 0.15,
            CASE WHEN paired AND zd.mean_k - zn.mean_k > 0 THEN 0.85 / (zd.mean_k - zn.mean_k) END,
            zd.mean_k - rd.mean_k, CASE WHEN paired THEN zn.mean_k - rn.mean_k END,
            CASE WHEN zd.mean_k IS NULL OR NOT paired OR zn.mean_k IS NULL THEN 'partial' ELSE 'ok' END,
            CASE WHEN NOT paired THEN 'no night pair' WHEN zd.mean_k IS NULL OR zn.mean_k IS NULL THEN 'low valid fraction' END,
            sd.run_id
     FROM scenes sd
     JOIN scenes sn ON sn.pass = 'night' AND sn.acquired_at::date = sd.acquired_at::date
     CROSS JOIN LATERAL (SELECT (sd.acquired_at::date - ${first}) % 17 <> 5 AS paired) AS pr
     JOIN zonal_stats zd ON zd.scene_id = sd.id
     JOIN zonal_stats zn ON zn.scene_id = sn.id AND zn.district_id = zd.district_id
     JOIN zonal_stats rd ON rd.scene_id = sd.id AND rd.district_id = 'rural'
     JOIN zonal_stats rn ON rn.scene_id = sn.id AND rn.district_id = 'rural'
     WHERE sd.pass = 'day'`,
    'ANALYZE',
  ];
}

/** The named queries as they read before migration 006: every request aggregates district_daily(). */
export const QUERIES_BEFORE_006 = {
  district_table_date: `
    SELECT d.id AS district_id, d.name AS district_name, d.role,
           x.obs_date, x.lst_day_k, x.lst_night_k, x.suhi_day_k, x.suhi_night_k, x.ati_per_k,
           x.day_scenes, x.night_scenes
    FROM district_daily($2::double precision) x
    JOIN districts d ON d.id = x.district_id
    WHERE $1::integer IS NULL OR extract(year FROM x.obs_date)::integer = $1::integer
    ORDER BY d.role COLLATE "C", d.id COLLATE "C", x.obs_date`,
  district_table_year: `
    WITH daily AS (SELECT * FROM district_daily($2::double precision)),
    yearly AS (
      SELECT district_id, extract(year FROM obs_date)::integer AS year,
             count(*) FILTER (WHERE lst_day_k IS NOT NULL OR lst_night_k IS NOT NULL OR suhi_day_k IS NOT NULL
                                 OR suhi_night_k IS NOT NULL OR ati_per_k IS NOT NULL) AS dates,
             avg(lst_day_k) AS lst_day_k, avg(lst_night_k) AS lst_night_k, avg(suhi_day_k) AS suhi_day_k,
             avg(suhi_night_k) AS suhi_night_k, avg(ati_per_k) AS ati_per_k,
             sum(day_scenes) AS day_scenes, sum(night_scenes) AS night_scenes
      FROM daily GROUP BY district_id, extract(year FROM obs_date)::integer
    )
    SELECT d.id AS district_id, d.name AS district_name, d.role,
           y.year, y.dates, y.lst_day_k, y.lst_night_k, y.suhi_day_k, y.suhi_night_k, y.ati_per_k,
           y.day_scenes, y.night_scenes
    FROM yearly y JOIN districts d ON d.id = y.district_id
    WHERE $1::integer IS NULL OR y.year = $1::integer
    ORDER BY d.role COLLATE "C", d.id COLLATE "C", y.year`,
  district_series: `
    WITH picked AS (
      SELECT x.district_id, extract(month FROM x.obs_date)::integer AS obs_month, extract(year FROM x.obs_date)::integer AS obs_year,
             CASE $1::text WHEN 'lst_day' THEN x.lst_day_k WHEN 'lst_night' THEN x.lst_night_k WHEN 'suhi_day' THEN x.suhi_day_k
                           WHEN 'suhi_night' THEN x.suhi_night_k WHEN 'ati' THEN x.ati_per_k END AS value
      FROM district_daily($5::double precision) x
    )
    SELECT d.id AS district_id, d.name AS district_name,
           p.obs_year + CASE WHEN $3::integer IS NOT NULL AND p.obs_month >= $3::integer THEN 1 ELSE 0 END AS season_year,
           CASE WHEN $4::boolean THEN p.obs_month ELSE 0 END AS month,
           count(p.value)::integer AS dates, avg(p.value) AS value
    FROM picked p JOIN districts d ON d.id = p.district_id AND d.role = 'district'
    WHERE $2::text IS NULL OR p.obs_month = ANY (string_to_array($2::text, ',')::integer[])
    GROUP BY 1, 2, 3, 4 HAVING count(p.value) > 0
    ORDER BY d.id COLLATE "C", 3, 4`,
} as const;

/** The named queries as they read before migration 008 (006 and 007): every district's kept rows joined, then sorted as one. */
export const QUERIES_BEFORE_008 = {
  district_table_date: `
    SELECT d.id AS district_id, d.name AS district_name, d.role,
           x.obs_date, x.lst_day_k, x.lst_night_k, x.suhi_day_k, x.suhi_night_k, x.ati_per_k,
           x.day_scenes, x.night_scenes
    FROM district_days($2::double precision, $1::integer) x
    JOIN districts d ON d.id = x.district_id
    ORDER BY d.role COLLATE "C", d.id COLLATE "C", x.obs_date`,
  district_table_year: `
    WITH yearly AS (
      SELECT district_id, obs_year AS year, sum(dates) AS dates,
             sum(lst_day_sum ORDER BY obs_month) / nullif(sum(lst_day_dates), 0)       AS lst_day_k,
             sum(lst_night_sum ORDER BY obs_month) / nullif(sum(lst_night_dates), 0)   AS lst_night_k,
             sum(suhi_day_sum ORDER BY obs_month) / nullif(sum(suhi_day_dates), 0)     AS suhi_day_k,
             sum(suhi_night_sum ORDER BY obs_month) / nullif(sum(suhi_night_dates), 0) AS suhi_night_k,
             sum(ati_sum ORDER BY obs_month) / nullif(sum(ati_dates), 0)               AS ati_per_k,
             sum(day_scenes) AS day_scenes, sum(night_scenes) AS night_scenes
      FROM district_months($2::double precision)
      WHERE $1::integer IS NULL OR obs_year = $1::integer
      GROUP BY district_id, obs_year
    )
    SELECT d.id AS district_id, d.name AS district_name, d.role,
           y.year, y.dates, y.lst_day_k, y.lst_night_k, y.suhi_day_k, y.suhi_night_k, y.ati_per_k,
           y.day_scenes, y.night_scenes
    FROM yearly y JOIN districts d ON d.id = y.district_id
    WHERE $1::integer IS NULL OR y.year = $1::integer
    ORDER BY d.role COLLATE "C", d.id COLLATE "C", y.year`,
  district_series: `
    WITH picked AS (
      SELECT m.district_id, m.obs_month, m.obs_year,
             CASE $1::text WHEN 'lst_day' THEN m.lst_day_sum WHEN 'lst_night' THEN m.lst_night_sum WHEN 'suhi_day' THEN m.suhi_day_sum
                           WHEN 'suhi_night' THEN m.suhi_night_sum WHEN 'ati' THEN m.ati_sum END AS value_sum,
             CASE $1::text WHEN 'lst_day' THEN m.lst_day_dates WHEN 'lst_night' THEN m.lst_night_dates WHEN 'suhi_day' THEN m.suhi_day_dates
                           WHEN 'suhi_night' THEN m.suhi_night_dates WHEN 'ati' THEN m.ati_dates END AS value_dates
      FROM district_months($5::double precision) m
    )
    SELECT d.id AS district_id, d.name AS district_name,
           p.obs_year + CASE WHEN $3::integer IS NOT NULL AND p.obs_month >= $3::integer THEN 1 ELSE 0 END AS season_year,
           CASE WHEN $4::boolean THEN p.obs_month ELSE 0 END AS month,
           sum(p.value_dates)::integer AS dates,
           sum(p.value_sum ORDER BY p.obs_year, p.obs_month) / sum(p.value_dates) AS value
    FROM picked p JOIN districts d ON d.id = p.district_id AND d.role = 'district'
    WHERE $2::text IS NULL OR p.obs_month = ANY (string_to_array($2::text, ',')::integer[])
    GROUP BY 1, 2, 3, 4 HAVING sum(p.value_dates) > 0
    ORDER BY d.id COLLATE "C", 3, 4`,
} as const;
