-- The district table and the trend series read one district at a time, in the
-- order they print, so no step of them sorts or aggregates the whole store at
-- once. Before this migration a year of the table by date (365,000 rows on a
-- store of 1,000 districts) was joined and then sorted as one heap, which spills
-- to disk at the server's default work memory (4 MB); the yearly table and the
-- series sorted all 120,000 kept months the same way.
--
--   districts_table_order  the districts in the tables' order: role, then id (byte order, COLLATE "C");
--                          the readers walk it and read each district's kept rows
--                          through the summaries' primary keys, already in date order
--   district_days(of_district, min_valid_fraction, in_year)
--   district_months(of_district, min_valid_fraction, in_year)
--                          one district's days and months: what the functions of the same
--                          names in 006_district_summaries.sql gave for every district,
--                          now taken per district (a lateral call from the named queries).
--                          With no minimum valid fraction they read the kept summaries;
--                          with one they compute from derived_metrics and zonal_stats
--                          through district_daily() (003_district_daily.sql), one district
--                          at a time (derived_metrics_district_date serves it, and its
--                          obs_date range when one year is asked).
-- What the queries return is unchanged: same rows, same order, same sums
-- (test/integration/store-summaries.test.ts compares them with the queries as
-- they read before 006).

CREATE INDEX districts_table_order ON districts (role COLLATE "C", id COLLATE "C");

DROP FUNCTION district_days(double precision, integer);
DROP FUNCTION district_months(double precision);

-- One district's days (as district_daily) of one year or of all (in_year NULL).
CREATE FUNCTION district_days(of_district text, min_valid_fraction double precision, in_year integer)
RETURNS TABLE (
  obs_date     date,
  lst_day_k    double precision,
  lst_night_k  double precision,
  suhi_day_k   double precision,
  suhi_night_k double precision,
  ati_per_k    double precision,
  day_scenes   bigint,
  night_scenes bigint
)
LANGUAGE sql STABLE AS $fn$
  SELECT s.obs_date, s.lst_day_k, s.lst_night_k, s.suhi_day_k, s.suhi_night_k, s.ati_per_k, s.day_scenes, s.night_scenes
  FROM district_day_summary s
  WHERE min_valid_fraction IS NULL AND s.district_id = of_district
    AND (in_year IS NULL OR (s.obs_date >= make_date(in_year, 1, 1) AND s.obs_date < make_date(in_year + 1, 1, 1)))
  UNION ALL
  SELECT x.obs_date, x.lst_day_k, x.lst_night_k, x.suhi_day_k, x.suhi_night_k, x.ati_per_k, x.day_scenes, x.night_scenes
  FROM district_daily(min_valid_fraction) x
  WHERE min_valid_fraction IS NOT NULL AND x.district_id = of_district
    AND (in_year IS NULL OR (x.obs_date >= make_date(in_year, 1, 1) AND x.obs_date < make_date(in_year + 1, 1, 1)))
$fn$;

-- One district's months (the columns of district_month_summary after district_id), kept or computed,
-- of one year or of all (in_year NULL).
CREATE FUNCTION district_months(of_district text, min_valid_fraction double precision, in_year integer)
RETURNS TABLE (
  obs_year          integer,
  obs_month         integer,
  dates             integer,
  lst_day_sum       double precision,
  lst_day_dates     integer,
  lst_night_sum     double precision,
  lst_night_dates   integer,
  suhi_day_sum      double precision,
  suhi_day_dates    integer,
  suhi_night_sum    double precision,
  suhi_night_dates  integer,
  ati_sum           double precision,
  ati_dates         integer,
  day_scenes        bigint,
  night_scenes      bigint
)
LANGUAGE sql STABLE AS $fn$
  SELECT s.obs_year, s.obs_month, s.dates, s.lst_day_sum, s.lst_day_dates, s.lst_night_sum, s.lst_night_dates,
         s.suhi_day_sum, s.suhi_day_dates, s.suhi_night_sum, s.suhi_night_dates, s.ati_sum, s.ati_dates,
         s.day_scenes, s.night_scenes
  FROM district_month_summary s
  WHERE min_valid_fraction IS NULL AND s.district_id = of_district AND (in_year IS NULL OR s.obs_year = in_year)
  UNION ALL
  -- the sums of district_month_summary_refresh() (006), over computed days
  SELECT m.obs_year, m.obs_month, sum(m.has_value)::integer,
         sum(d.lst_day_k ORDER BY d.obs_date), count(d.lst_day_k)::integer, sum(d.lst_night_k ORDER BY d.obs_date), count(d.lst_night_k)::integer,
         sum(d.suhi_day_k ORDER BY d.obs_date), count(d.suhi_day_k)::integer, sum(d.suhi_night_k ORDER BY d.obs_date), count(d.suhi_night_k)::integer,
         sum(d.ati_per_k ORDER BY d.obs_date), count(d.ati_per_k)::integer, sum(d.day_scenes)::bigint, sum(d.night_scenes)::bigint
  FROM district_daily(min_valid_fraction) d
  CROSS JOIN LATERAL district_month_of(d.obs_date, d.lst_day_k, d.lst_night_k, d.suhi_day_k, d.suhi_night_k, d.ati_per_k) m
  WHERE min_valid_fraction IS NOT NULL AND d.district_id = of_district
    AND (in_year IS NULL OR (d.obs_date >= make_date(in_year, 1, 1) AND d.obs_date < make_date(in_year + 1, 1, 1)))
  GROUP BY m.obs_year, m.obs_month
$fn$;
