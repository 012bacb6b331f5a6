-- district_table_year: one row per district and year, ordered by role (districts, then rural), district id, year.
--   $1  year (integer), or NULL for every year
--   $2  minimum valid fraction, as in district_table_date.sql; NULL = no further filter
-- Each mean is over the dates of that year that have the value (every date
-- weighs the same, whatever its number of scenes): the sum of the daily values
-- over the number of dates with one, summed in month order (the same digits
-- whatever order the months are stored in); the counts are totals.
-- Each district's months come from district_months() (sql/migrations/008_district_reads.sql),
-- kept or computed from district_daily() (sql/migrations/003_district_daily.sql), read district
-- by district in the order printed (districts_table_order).
SELECT d.id AS district_id, d.name AS district_name, d.role,
       y.year, y.dates, y.lst_day_k, y.lst_night_k, y.suhi_day_k, y.suhi_night_k, y.ati_per_k,
       y.day_scenes, y.night_scenes
FROM districts d
CROSS JOIN LATERAL (
  SELECT m.obs_year AS year,
         -- dates with any value (a date whose passes all fell below $2 has none)
         sum(m.dates) AS dates,
         sum(m.lst_day_sum ORDER BY m.obs_month) / nullif(sum(m.lst_day_dates), 0)       AS lst_day_k,
         sum(m.lst_night_sum ORDER BY m.obs_month) / nullif(sum(m.lst_night_dates), 0)   AS lst_night_k,
         sum(m.suhi_day_sum ORDER BY m.obs_month) / nullif(sum(m.suhi_day_dates), 0)     AS suhi_day_k,
         sum(m.suhi_night_sum ORDER BY m.obs_month) / nullif(sum(m.suhi_night_dates), 0) AS suhi_night_k,
         sum(m.ati_sum ORDER BY m.obs_month) / nullif(sum(m.ati_dates), 0)               AS ati_per_k,
         sum(m.day_scenes)   AS day_scenes,
         sum(m.night_scenes) AS night_scenes
  FROM district_months(d.id, $2::double precision, $1::integer) m
  GROUP BY m.obs_year
) y
ORDER BY d.role COLLATE "C", d.id COLLATE "C", y.year
