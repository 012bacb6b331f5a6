-- district_metric_dates: the dates behind one district's seasonal means of one
-- metric (the dates whose value the mean is over), by season-year.
--   $1  district id
--   $2  metric: 'lst_day' | 'lst_night' | 'suhi_day' | 'suhi_night' | 'ati'
--   $3  months to keep, comma-separated, or NULL for every month
--   $4  first month that belongs to the NEXT season-year, or NULL
--   $5  minimum valid fraction, as in district_table_date.sql; NULL = no further filter
-- Ordered by date. The dates come from district_daily() (sql/migrations/003_district_daily.sql).
WITH picked AS (
  SELECT x.obs_date,
         extract(month FROM x.obs_date)::integer AS obs_month,
         extract(year FROM x.obs_date)::integer AS obs_year,
         CASE $2::text
           WHEN 'lst_day' THEN x.lst_day_k
           WHEN 'lst_night' THEN x.lst_night_k
           WHEN 'suhi_day' THEN x.suhi_day_k
           WHEN 'suhi_night' THEN x.suhi_night_k
           WHEN 'ati' THEN x.ati_per_k
         END AS value
  FROM district_daily($5::double precision) x
  WHERE x.district_id = $1::text
)
SELECT p.obs_year + CASE WHEN $4::integer IS NOT NULL AND p.obs_month >= $4::integer THEN 1 ELSE 0 END AS season_year,
       p.obs_date
FROM picked p
WHERE p.value IS NOT NULL
  AND ($3::text IS NULL OR p.obs_month = ANY (string_to_array($3::text, ',')::integer[]))
ORDER BY p.obs_date
