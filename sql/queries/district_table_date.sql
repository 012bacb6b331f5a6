-- district_table_date: one row per district, ordered by role (districts, then rural) and district id,
-- with that district's dates in date order packed as one binary value (days); workers/store/district-tables.ts
-- unfolds it into one row per district and date.
--   $1  year (integer), or NULL for every year
--   $2  minimum valid fraction (0..1) of a district's pixels for a pass to count,
--       on top of the one the derive step applied; NULL = no further filter
-- days holds 54 bytes per date, big-endian (PostgreSQL's binary send formats):
--   int4  obs_date as days since 1970-01-01
--   int2  which values are null: bit 0 lst_day_k, 1 lst_night_k, 2 suhi_day_k, 3 suhi_night_k, 4 ati_per_k
--   5 × float8  lst_day_k, lst_night_k, suhi_day_k, suhi_night_k (Kelvin), ati_per_k (per Kelvin);
--               0 where null, every other double exactly as stored (NaN and infinities included)
--   2 × int4    day_scenes, night_scenes
-- Why packed: a year of 1,000 districts is 365,000 dates. As one row each they cost the client
-- far more to decode than the server to compute; as one JSON array per district the server spent
-- most of its time building JSON and the client parsing 17-digit numbers. The packed form is the
-- stored doubles themselves, built and read with no text conversion of a number
-- (npm run bench -- --big-store prints the times).
-- Each district's dates come from district_days() (sql/migrations/008_district_reads.sql): the kept
-- summary of district_daily() (sql/migrations/003_district_daily.sql), or district_daily($2) itself,
-- read district by district in the order printed (districts_table_order).
SELECT d.id AS district_id, d.name AS district_name, d.role, x.days
FROM districts d
CROSS JOIN LATERAL (
  SELECT string_agg(
           int4send(obs_date - DATE '1970-01-01')
           || int2send(((lst_day_k IS NULL)::integer + 2 * (lst_night_k IS NULL)::integer + 4 * (suhi_day_k IS NULL)::integer
                        + 8 * (suhi_night_k IS NULL)::integer + 16 * (ati_per_k IS NULL)::integer)::smallint)
           || float8send(coalesce(lst_day_k, 0)) || float8send(coalesce(lst_night_k, 0))
           || float8send(coalesce(suhi_day_k, 0)) || float8send(coalesce(suhi_night_k, 0))
           || float8send(coalesce(ati_per_k, 0))
           || int4send(day_scenes::integer) || int4send(night_scenes::integer),
           ''::bytea ORDER BY obs_date) AS days
  FROM district_days(d.id, $2::double precision, $1::integer)
) x
WHERE x.days IS NOT NULL
ORDER BY d.role COLLATE "C", d.id COLLATE "C"
