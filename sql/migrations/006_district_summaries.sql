-- District summaries kept beside derived_metrics, so the district table and the
-- trend series of a store of 1,000 districts × 10 years (3.65 million derived
-- rows, 7.3 million zonal rows) read at most one row per district and date
-- (a year of the table by date) or per district and month (the yearly table and
-- the series) instead of aggregating every derived row on each request.
--
--   district_day_summary    district_daily(NULL) kept as a table: one row per district and date
--   district_month_summary  per district and calendar month (UTC): for each metric the sum of
--                           its daily values and the number of dates that have one, the dates
--                           with any value, and the scene counts
--
-- Both are kept by statement triggers on derived_metrics (insert, update, delete,
-- truncate): the (district, date) keys a statement touched are recomputed from
-- derived_metrics through district_daily() (sql/migrations/003_district_daily.sql),
-- which stays the one definition of a district's day. On the server, writers of
-- the summaries take turns on a transaction advisory lock, so two transactions never
-- recompute the same day from different snapshots.
--
-- Readers go through district_days(min_valid_fraction, year) and
-- district_months(min_valid_fraction): with no minimum valid fraction (NULL, what
-- every command and the API ask for) they read the summaries; with one, they
-- compute from derived_metrics and zonal_stats as before (district_daily($1)).
-- A mean over a year or a season is the sum of the daily values over the number
-- of dates with a value: the same mean as averaging the daily rows, up to
-- floating-point rounding in the last digits. Every floating-point sum runs in
-- date order (sum(... ORDER BY ...)), so the result does not depend on the order
-- rows happen to be stored in: the embedded engine and the server, fed the same
-- rows in any order, give the same digits.
--
-- The scene listing pages by (acquired_at, id): scenes_acquired_id serves its
-- keyset condition and order.

CREATE TABLE district_day_summary (
  district_id  text             NOT NULL,
  obs_date     date             NOT NULL,
  lst_day_k    double precision,
  lst_night_k  double precision,
  suhi_day_k   double precision,
  suhi_night_k double precision,
  ati_per_k    double precision,
  day_scenes   bigint           NOT NULL,
  night_scenes bigint           NOT NULL,
  PRIMARY KEY (district_id, obs_date)
);
CREATE INDEX district_day_summary_date ON district_day_summary (obs_date);

CREATE TABLE district_month_summary (
  district_id       text             NOT NULL,
  obs_year          integer          NOT NULL,
  obs_month         integer          NOT NULL CHECK (obs_month BETWEEN 1 AND 12),
  -- dates of the month with any value (as district_table_year.sql counts them)
  dates             integer          NOT NULL,
  lst_day_sum       double precision,
  lst_day_dates     integer          NOT NULL,
  lst_night_sum     double precision,
  lst_night_dates   integer          NOT NULL,
  suhi_day_sum      double precision,
  suhi_day_dates    integer          NOT NULL,
  suhi_night_sum    double precision,
  suhi_night_dates  integer          NOT NULL,
  ati_sum           double precision,
  ati_dates         integer          NOT NULL,
  day_scenes        bigint           NOT NULL,
  night_scenes      bigint           NOT NULL,
  PRIMARY KEY (district_id, obs_year, obs_month)
);

CREATE INDEX scenes_acquired_id ON scenes (acquired_at, id);

-- Year and month of a date, and 1 when the day has any value (as district_table_year.sql counts dates).
CREATE FUNCTION district_month_of(
  obs_date date, lst_day_k double precision, lst_night_k double precision, suhi_day_k double precision,
  suhi_night_k double precision, ati_per_k double precision)
RETURNS TABLE (obs_year integer, obs_month integer, has_value integer)
LANGUAGE sql IMMUTABLE AS $fn$
  SELECT extract(year FROM obs_date)::integer, extract(month FROM obs_date)::integer,
         CASE WHEN lst_day_k IS NOT NULL OR lst_night_k IS NOT NULL OR suhi_day_k IS NOT NULL
                OR suhi_night_k IS NOT NULL OR ati_per_k IS NOT NULL THEN 1 ELSE 0 END
$fn$;

-- Recompute the kept months of the given (district, first day of month) keys from the kept days.
-- (district_months() below sums computed days the same way.)
CREATE FUNCTION district_month_summary_refresh(ids text[], first_days date[]) RETURNS void
LANGUAGE sql AS $fn$
  DELETE FROM district_month_summary s
   USING unnest(ids, first_days) AS k(district_id, first_day)
   WHERE s.district_id = k.district_id AND s.obs_year = extract(year FROM k.first_day) AND s.obs_month = extract(month FROM k.first_day);
  INSERT INTO district_month_summary
  SELECT d.district_id, m.obs_year, m.obs_month, sum(m.has_value),
         sum(d.lst_day_k ORDER BY d.obs_date), count(d.lst_day_k), sum(d.lst_night_k ORDER BY d.obs_date), count(d.lst_night_k),
         sum(d.suhi_day_k ORDER BY d.obs_date), count(d.suhi_day_k), sum(d.suhi_night_k ORDER BY d.obs_date), count(d.suhi_night_k),
         sum(d.ati_per_k ORDER BY d.obs_date), count(d.ati_per_k), sum(d.day_scenes), sum(d.night_scenes)
  FROM (SELECT DISTINCT * FROM unnest(ids, first_days) AS k(district_id, first_day)) k
  JOIN district_day_summary d
    ON d.district_id = k.district_id AND d.obs_date >= k.first_day AND d.obs_date < (k.first_day + interval '1 month')::date
  CROSS JOIN LATERAL district_month_of(d.obs_date, d.lst_day_k, d.lst_night_k, d.suhi_day_k, d.suhi_night_k, d.ati_per_k) m
  GROUP BY d.district_id, m.obs_year, m.obs_month;
$fn$;

-- Recompute the kept days of the given (district, date) keys from derived_metrics, then their months.
CREATE FUNCTION district_summaries_refresh(ids text[], dates date[]) RETURNS void
LANGUAGE plpgsql AS $fn$
DECLARE
  month_ids text[];
  month_firsts date[];
BEGIN
  -- one writer of the summaries at a time (released at commit or rollback)
  PERFORM pg_advisory_xact_lock(7146205315380163);
  DELETE FROM district_day_summary s
   USING unnest(ids, dates) AS k(district_id, obs_date)
   WHERE s.district_id = k.district_id AND s.obs_date = k.obs_date;
  INSERT INTO district_day_summary
  SELECT x.district_id, x.obs_date, x.lst_day_k, x.lst_night_k, x.suhi_day_k, x.suhi_night_k, x.ati_per_k, x.day_scenes, x.night_scenes
  FROM (SELECT DISTINCT * FROM unnest(ids, dates) AS k(district_id, obs_date)) k
  CROSS JOIN LATERAL (SELECT * FROM district_daily(NULL) d WHERE d.district_id = k.district_id AND d.obs_date = k.obs_date) x;
  SELECT array_agg(district_id), array_agg(first_day) INTO month_ids, month_firsts
  FROM (SELECT DISTINCT district_id, date_trunc('month', obs_date)::date AS first_day FROM unnest(ids, dates) AS k(district_id, obs_date)) m;
  PERFORM district_month_summary_refresh(month_ids, month_firsts);
END;
$fn$;

CREATE FUNCTION derived_metrics_refresh_summaries() RETURNS trigger
LANGUAGE plpgsql AS $fn$
DECLARE
  ids text[];
  dates date[];
BEGIN
  IF TG_OP = 'TRUNCATE' THEN
    DELETE FROM district_day_summary;
    DELETE FROM district_month_summary;
    RETURN NULL;
  ELSIF TG_OP = 'INSERT' THEN
    SELECT array_agg(district_id), array_agg(obs_date) INTO ids, dates FROM new_rows;
  ELSIF TG_OP = 'UPDATE' THEN
    SELECT array_agg(district_id), array_agg(obs_date) INTO ids, dates
    FROM (SELECT district_id, obs_date FROM new_rows UNION ALL SELECT district_id, obs_date FROM old_rows) AS k;
  ELSE
    SELECT array_agg(district_id), array_agg(obs_date) INTO ids, dates FROM old_rows;
  END IF;
  IF ids IS NOT NULL THEN
    PERFORM district_summaries_refresh(ids, dates);
  END IF;
  RETURN NULL;
END;
$fn$;

-- (a trigger with transition tables fires on one kind of event only)
CREATE TRIGGER derived_metrics_summaries_insert AFTER INSERT ON derived_metrics
  REFERENCING NEW TABLE AS new_rows FOR EACH STATEMENT EXECUTE FUNCTION derived_metrics_refresh_summaries();
CREATE TRIGGER derived_metrics_summaries_update AFTER UPDATE ON derived_metrics
  REFERENCING OLD TABLE AS old_rows NEW TABLE AS new_rows FOR EACH STATEMENT EXECUTE FUNCTION derived_metrics_refresh_summaries();
CREATE TRIGGER derived_metrics_summaries_delete AFTER DELETE ON derived_metrics
  REFERENCING OLD TABLE AS old_rows FOR EACH STATEMENT EXECUTE FUNCTION derived_metrics_refresh_summaries();
CREATE TRIGGER derived_metrics_summaries_truncate AFTER TRUNCATE ON derived_metrics
  FOR EACH STATEMENT EXECUTE FUNCTION derived_metrics_refresh_summaries();

-- The summaries of a store made before this migration: every day at once, then every month.
INSERT INTO district_day_summary
SELECT district_id, obs_date, lst_day_k, lst_night_k, suhi_day_k, suhi_night_k, ati_per_k, day_scenes, night_scenes
FROM district_daily(NULL);
SELECT district_month_summary_refresh(array_agg(district_id), array_agg(first_day))
FROM (SELECT DISTINCT district_id, date_trunc('month', obs_date)::date AS first_day FROM district_day_summary) m;

-- The district's days (as district_daily) of one year or of all (in_year NULL).
CREATE FUNCTION district_days(min_valid_fraction double precision, in_year integer)
RETURNS TABLE (
  district_id  text,
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
  SELECT s.district_id, s.obs_date, s.lst_day_k, s.lst_night_k, s.suhi_day_k, s.suhi_night_k, s.ati_per_k, s.day_scenes, s.night_scenes
  FROM district_day_summary s
  WHERE min_valid_fraction IS NULL
    AND (in_year IS NULL OR (s.obs_date >= make_date(in_year, 1, 1) AND s.obs_date < make_date(in_year + 1, 1, 1)))
  UNION ALL
  SELECT x.district_id, x.obs_date, x.lst_day_k, x.lst_night_k, x.suhi_day_k, x.suhi_night_k, x.ati_per_k, x.day_scenes, x.night_scenes
  FROM district_daily(min_valid_fraction) x
  WHERE min_valid_fraction IS NOT NULL
    AND (in_year IS NULL OR (x.obs_date >= make_date(in_year, 1, 1) AND x.obs_date < make_date(in_year + 1, 1, 1)))
$fn$;

-- The district's months (as district_month_summary), kept or computed.
CREATE FUNCTION district_months(min_valid_fraction double precision)
RETURNS SETOF district_month_summary
LANGUAGE sql STABLE AS $fn$
  SELECT * FROM district_month_summary WHERE min_valid_fraction IS NULL
  UNION ALL
  -- the sums of district_month_summary_refresh(), over computed days
  SELECT d.district_id, m.obs_year, m.obs_month, sum(m.has_value)::integer,
         sum(d.lst_day_k ORDER BY d.obs_date), count(d.lst_day_k)::integer, sum(d.lst_night_k ORDER BY d.obs_date), count(d.lst_night_k)::integer,
         sum(d.suhi_day_k ORDER BY d.obs_date), count(d.suhi_day_k)::integer, sum(d.suhi_night_k ORDER BY d.obs_date), count(d.suhi_night_k)::integer,
         sum(d.ati_per_k ORDER BY d.obs_date), count(d.ati_per_k)::integer, sum(d.day_scenes)::bigint, sum(d.night_scenes)::bigint
  FROM district_daily(min_valid_fraction) d
  CROSS JOIN LATERAL district_month_of(d.obs_date, d.lst_day_k, d.lst_night_k, d.suhi_day_k, d.suhi_night_k, d.ati_per_k) m
  WHERE min_valid_fraction IS NOT NULL
  GROUP BY d.district_id, m.obs_year, m.obs_month
$fn$;
