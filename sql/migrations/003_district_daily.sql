-- One definition of the per-district, per-date table, which both named queries
-- (sql/queries/district_table_date.sql and district_table_year.sql) select from.
-- min_valid_fraction (0..1, or NULL for no further filter) nulls a pass's values
-- whose zonal valid fraction is below it, on top of what the derive step applied.
-- Everything comes from derived_metrics: a day pass and the night pass paired with
-- it share the date of the day pass (UTC); a night pass no day took is dated by
-- its own acquisition. Means are over that date's rows (each pair weighs the
-- same); counts are distinct scenes that gave a value.
CREATE FUNCTION district_daily(min_valid_fraction double precision)
RETURNS TABLE (
  district_id  text,
  obs_date     date,
  lst_day_k    double precision,
  lst_night_k  double precision,
  suhi_day_k   double precision,
  suhi_night_k double precision,
  ati_per_k    double precision,
  day_scenes   bigint,
  night_scenes bigint
)
LANGUAGE sql STABLE AS $fn$
WITH pass_quality AS (
  SELECT m.obs_date, m.district_id, m.day_scene_id, m.night_scene_id,
         CASE WHEN min_valid_fraction IS NULL OR coalesce(zd.valid_fraction, 0) >= min_valid_fraction
              THEN m.t_day_k END AS t_day_k,
         CASE WHEN min_valid_fraction IS NULL OR coalesce(zn.valid_fraction, 0) >= min_valid_fraction
              THEN m.t_night_k END AS t_night_k,
         CASE WHEN min_valid_fraction IS NULL OR coalesce(zd.valid_fraction, 0) >= min_valid_fraction
              THEN m.suhi_day_k END AS suhi_day_k,
         CASE WHEN min_valid_fraction IS NULL OR coalesce(zn.valid_fraction, 0) >= min_valid_fraction
              THEN m.suhi_night_k END AS suhi_night_k,
         CASE WHEN min_valid_fraction IS NULL
                OR (coalesce(zd.valid_fraction, 0) >= min_valid_fraction AND coalesce(zn.valid_fraction, 0) >= min_valid_fraction)
              THEN m.ati_per_k END AS ati_per_k
  FROM derived_metrics m
  LEFT JOIN zonal_stats zd ON zd.scene_id = m.day_scene_id AND zd.district_id = m.district_id
  LEFT JOIN zonal_stats zn ON zn.scene_id = m.night_scene_id AND zn.district_id = m.district_id
),
daily AS (
  SELECT district_id, obs_date,
         avg(t_day_k)      AS lst_day_k,
         avg(t_night_k)    AS lst_night_k,
         avg(suhi_day_k)   AS suhi_day_k,
         avg(suhi_night_k) AS suhi_night_k,
         avg(ati_per_k)    AS ati_per_k,
         count(DISTINCT day_scene_id) FILTER (WHERE t_day_k IS NOT NULL)     AS day_scenes,
         count(DISTINCT night_scene_id) FILTER (WHERE t_night_k IS NOT NULL) AS night_scenes
  FROM pass_quality
  GROUP BY district_id, obs_date
)
SELECT district_id, obs_date, lst_day_k, lst_night_k, suhi_day_k, suhi_night_k, ati_per_k, day_scenes, night_scenes
FROM daily
$fn$;
