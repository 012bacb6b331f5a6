-- district_table_year: one row per district and year, ordered by role (districts, then rural), district id, year.
--   $1  year (integer), or NULL for every year
--   $2  minimum valid fraction, as in district_table_date.sql; NULL = no further filter
-- Each mean is over the dates of that year that have the value (every date
-- weighs the same, whatever its number of scenes); the counts are totals.
-- The dates come from district_daily() (sql/migrations/003_district_daily.sql).
WITH daily AS (
  SELECT * FROM district_daily($2::double precision)
),
yearly AS (
  SELECT district_id,
         extract(year FROM obs_date)::integer AS year,
         -- dates with any value (a date whose passes all fell below $2 has none)
         count(*) FILTER (WHERE lst_day_k IS NOT NULL OR lst_night_k IS NOT NULL OR suhi_day_k IS NOT NULL
                             OR suhi_night_k IS NOT NULL OR ati_per_k IS NOT NULL) AS dates,
         avg(lst_day_k)    AS lst_day_k,
         avg(lst_night_k)  AS lst_night_k,
         avg(suhi_day_k)   AS suhi_day_k,
         avg(suhi_night_k) AS suhi_night_k,
         avg(ati_per_k)    AS ati_per_k,
         sum(day_scenes)   AS day_scenes,
         sum(night_scenes) AS night_scenes
  FROM daily
  GROUP BY district_id, extract(year FROM obs_date)::integer
)
SELECT d.id AS district_id, d.name AS district_name, d.role,
       y.year, y.dates, y.lst_day_k, y.lst_night_k, y.suhi_day_k, y.suhi_night_k, y.ati_per_k,
       y.day_scenes, y.night_scenes
FROM yearly y
JOIN districts d ON d.id = y.district_id
WHERE $1::integer IS NULL OR y.year = $1::integer
ORDER BY d.role COLLATE "C", d.id COLLATE "C", y.year
