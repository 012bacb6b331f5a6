-- district_table_date: one row per district and date, ordered by role (districts, then rural), district id, date.
--   $1  year (integer), or NULL for every year
--   $2  minimum valid fraction (0..1) of a district's pixels for a pass to count,
--       on top of the one the derive step applied; NULL = no further filter
-- Everything comes from derived_metrics, so a day pass and the night pass paired
-- with it share the date of the day pass (UTC calendar date); a night pass no
-- day took is dated by its own acquisition. Means are over that date's rows
-- (each pair weighs the same); counts are distinct scenes used.
-- Kelvin (_k), per Kelvin (_per_k). Keep the CTEs in step with district_table_year.sql.
WITH pass_quality AS (
  SELECT m.obs_date, m.district_id, m.day_scene_id, m.night_scene_id,
         CASE WHEN $2::double precision IS NULL OR coalesce(zd.valid_fraction, 0) >= $2::double precision
              THEN m.t_day_k END AS t_day_k,
         CASE WHEN $2::double precision IS NULL OR coalesce(zn.valid_fraction, 0) >= $2::double precision
              THEN m.t_night_k END AS t_night_k,
         CASE WHEN $2::double precision IS NULL OR coalesce(zd.valid_fraction, 0) >= $2::double precision
              THEN m.suhi_day_k END AS suhi_day_k,
         CASE WHEN $2::double precision IS NULL OR coalesce(zn.valid_fraction, 0) >= $2::double precision
              THEN m.suhi_night_k END AS suhi_night_k,
         CASE WHEN $2::double precision IS NULL
                OR (coalesce(zd.valid_fraction, 0) >= $2::double precision AND coalesce(zn.valid_fraction, 0) >= $2::double precision)
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
SELECT d.id AS district_id, d.name AS district_name, d.role,
       x.obs_date, x.lst_day_k, x.lst_night_k, x.suhi_day_k, x.suhi_night_k, x.ati_per_k,
       x.day_scenes, x.night_scenes
FROM daily x
JOIN districts d ON d.id = x.district_id
WHERE $1::integer IS NULL OR extract(year FROM x.obs_date)::integer = $1::integer
ORDER BY d.role COLLATE "C", d.id COLLATE "C", x.obs_date
