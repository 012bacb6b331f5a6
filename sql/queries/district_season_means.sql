-- district_season_means: per district and season-year, the mean of every metric
-- over the dates of the months kept that have that value, with the number of
-- dates behind the day and the night means. Every district (the rural
-- reference too, when it has derived rows). Ordered by district id, season-year.
--   $1  months to keep, comma-separated ('6,7,8'), or NULL for every month
--   $2  first month that belongs to the NEXT season-year (12 for December-February), or NULL
--   $3  season-year (integer), or NULL for every season-year
--   $4  minimum valid fraction, as in district_table_date.sql; NULL = no further filter
-- Kelvin (_k), per Kelvin (_per_k). Each date weighs the same, whatever its
-- number of scenes. The dates come from district_daily() (sql/migrations/003_district_daily.sql).
WITH picked AS (
  SELECT x.*,
         extract(month FROM x.obs_date)::integer AS obs_month,
         extract(year FROM x.obs_date)::integer AS obs_year
  FROM district_daily($4::double precision) x
),
seasoned AS (
  SELECT p.*,
         p.obs_year + CASE WHEN $2::integer IS NOT NULL AND p.obs_month >= $2::integer THEN 1 ELSE 0 END AS season_year
  FROM picked p
  WHERE $1::text IS NULL OR p.obs_month = ANY (string_to_array($1::text, ',')::integer[])
)
SELECT s.district_id,
       s.season_year,
       avg(s.lst_day_k)            AS lst_day_k,
       avg(s.lst_night_k)          AS lst_night_k,
       avg(s.suhi_day_k)           AS suhi_day_k,
       avg(s.suhi_night_k)         AS suhi_night_k,
       avg(s.ati_per_k)            AS ati_per_k,
       count(s.lst_day_k)::integer   AS dates_day,
       count(s.lst_night_k)::integer AS dates_night
FROM seasoned s
WHERE $3::integer IS NULL OR s.season_year = $3::integer
GROUP BY s.district_id, s.season_year
ORDER BY s.district_id COLLATE "C", s.season_year
