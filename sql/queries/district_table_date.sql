-- district_table_date: one row per district, ordered by role (districts, then rural) and district id,
-- with that district's dates in date order as one JSON array (days); workers/store/district-tables.ts
-- unfolds it into one row per district and date.
--   $1  year (integer), or NULL for every year
--   $2  minimum valid fraction (0..1) of a district's pixels for a pass to count,
--       on top of the one the derive step applied; NULL = no further filter
-- Each element of days: [obs_date ('YYYY-MM-DD'), lst_day_k, lst_night_k, suhi_day_k, suhi_night_k,
-- ati_per_k, day_scenes, night_scenes]; Kelvin (_k), per Kelvin (_per_k); a value without a
-- number is null. A year of 1,000 districts is 365,000 dates: as one row each they cost the
-- client far more to decode than the server to compute (npm run bench -- --big-store prints both);
-- one JSON text per district is decoded natively, to the same numbers (JSON numbers are the
-- server's shortest exact text of each double, as in rows).
-- Each district's dates come from district_days() (sql/migrations/008_district_reads.sql): the kept
-- summary of district_daily() (sql/migrations/003_district_daily.sql), or district_daily($2) itself,
-- read district by district in the order printed (districts_table_order).
SELECT d.id AS district_id, d.name AS district_name, d.role, x.days
FROM districts d
CROSS JOIN LATERAL (
  SELECT json_agg(json_build_array(obs_date, lst_day_k, lst_night_k, suhi_day_k, suhi_night_k, ati_per_k, day_scenes, night_scenes)
                  ORDER BY obs_date) AS days
  FROM district_days(d.id, $2::double precision, $1::integer)
) x
WHERE x.days IS NOT NULL
ORDER BY d.role COLLATE "C", d.id COLLATE "C"
