-- district_table_date: one row per district and date, ordered by role (districts, then rural), district id, date.
--   $1  year (integer), or NULL for every year
--   $2  minimum valid fraction (0..1) of a district's pixels for a pass to count,
--       on top of the one the derive step applied; NULL = no further filter
-- Each district's rows come from district_days() (sql/migrations/008_district_reads.sql): the kept
-- summary of district_daily() (sql/migrations/003_district_daily.sql), or district_daily($2) itself,
-- read district by district in the order printed (districts_table_order), so only each district's
-- own dates are sorted. Kelvin (_k), per Kelvin (_per_k).
SELECT d.id AS district_id, d.name AS district_name, d.role,
       x.obs_date, x.lst_day_k, x.lst_night_k, x.suhi_day_k, x.suhi_night_k, x.ati_per_k,
       x.day_scenes, x.night_scenes
FROM districts d
CROSS JOIN LATERAL district_days(d.id, $2::double precision, $1::integer) x
ORDER BY d.role COLLATE "C", d.id COLLATE "C", x.obs_date
