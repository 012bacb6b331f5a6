-- district_series: the mean of one metric per district and season-year (or
-- season-year and month), over the dates that have a value, with the number of
-- those dates. Districts only (the rural reference is left out). Ordered by
-- district id, season-year, month.
--   $1  metric: 'lst_day' | 'lst_night' | 'suhi_day' | 'suhi_night' (Kelvin) | 'ati' (1/K)
--   $2  months to keep, comma-separated ('6,7,8'), or NULL for every month
--   $3  first month that belongs to the NEXT season-year (12 for a December-February
--       season, whose December counts with the following January), or NULL
--   $4  true: one row per month as well (month 1-12); false: month is 0
--   $5  minimum valid fraction, as in district_table_date.sql; NULL = no further filter
-- Each date weighs the same, whatever its number of scenes. Years without a
-- date with a value have no row: nothing is filled in.
-- The dates come from district_daily() (sql/migrations/003_district_daily.sql).
WITH picked AS (
  SELECT x.district_id,
         extract(month FROM x.obs_date)::integer AS obs_month,
         extract(year FROM x.obs_date)::integer AS obs_year,
         CASE $1::text
           WHEN 'lst_day' THEN x.lst_day_k
           WHEN 'lst_night' THEN x.lst_night_k
           WHEN 'suhi_day' THEN x.suhi_day_k
           WHEN 'suhi_night' THEN x.suhi_night_k
           WHEN 'ati' THEN x.ati_per_k
         END AS value
  FROM district_daily($5::double precision) x
)
SELECT d.id AS district_id,
       d.name AS district_name,
       p.obs_year + CASE WHEN $3::integer IS NOT NULL AND p.obs_month >= $3::integer THEN 1 ELSE 0 END AS season_year,
       CASE WHEN $4::boolean THEN p.obs_month ELSE 0 END AS month,
       count(p.value)::integer AS dates,
       avg(p.value) AS value
FROM picked p
JOIN districts d ON d.id = p.district_id AND d.role = 'district'
WHERE $2::text IS NULL OR p.obs_month = ANY (string_to_array($2::text, ',')::integer[])
GROUP BY 1, 2, 3, 4
HAVING count(p.value) > 0
ORDER BY d.id COLLATE "C", 3, 4
