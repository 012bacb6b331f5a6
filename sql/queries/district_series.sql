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
-- Each date weighs the same, whatever its number of scenes: the mean is the sum
-- of the daily values over the number of dates with one, summed in month order
-- (the same digits whatever order the months are stored in). Years without a
-- date with a value have no row: nothing is filled in.
-- Each district's months come from district_months() (sql/migrations/008_district_reads.sql),
-- kept or computed from district_daily() (sql/migrations/003_district_daily.sql), read district
-- by district.
SELECT d.id AS district_id,
       d.name AS district_name,
       s.season_year,
       s.month,
       s.dates,
       s.value
FROM districts d
CROSS JOIN LATERAL (
  SELECT p.obs_year + CASE WHEN $3::integer IS NOT NULL AND p.obs_month >= $3::integer THEN 1 ELSE 0 END AS season_year,
         CASE WHEN $4::boolean THEN p.obs_month ELSE 0 END AS month,
         sum(p.value_dates)::integer AS dates,
         sum(p.value_sum ORDER BY p.obs_year, p.obs_month) / sum(p.value_dates) AS value
  FROM (
    SELECT m.obs_year, m.obs_month,
           CASE $1::text
             WHEN 'lst_day' THEN m.lst_day_sum
             WHEN 'lst_night' THEN m.lst_night_sum
             WHEN 'suhi_day' THEN m.suhi_day_sum
             WHEN 'suhi_night' THEN m.suhi_night_sum
             WHEN 'ati' THEN m.ati_sum
           END AS value_sum,
           CASE $1::text
             WHEN 'lst_day' THEN m.lst_day_dates
             WHEN 'lst_night' THEN m.lst_night_dates
             WHEN 'suhi_day' THEN m.suhi_day_dates
             WHEN 'suhi_night' THEN m.suhi_night_dates
             WHEN 'ati' THEN m.ati_dates
           END AS value_dates
    FROM district_months(d.id, $5::double precision, NULL::integer) m
    WHERE $2::text IS NULL OR m.obs_month = ANY (string_to_array($2::text, ',')::integer[])
  ) p
  GROUP BY 1, 2
  HAVING sum(p.value_dates) > 0
) s
WHERE d.role = 'district'
ORDER BY d.id COLLATE "C", s.season_year, s.month
