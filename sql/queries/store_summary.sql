-- store_summary: what the health route and the response ETag need, in one statement.
-- schema_version: the highest migration applied; last run: the run that finished last
-- (any end state), its id, state and end time; years: calendar years with a derived value.
SELECT (SELECT max(version) FROM schema_migrations) AS schema_version,
       r.id AS run_id, r.status AS run_state, r.finished_at AS run_finished_at,
       (SELECT coalesce(array_agg(DISTINCT extract(year FROM obs_date)::integer ORDER BY extract(year FROM obs_date)::integer), '{}')
        FROM derived_metrics) AS years
FROM (SELECT 1) one
LEFT JOIN LATERAL (
  SELECT id, status, finished_at FROM runs WHERE finished_at IS NOT NULL ORDER BY finished_at DESC, id DESC LIMIT 1
) r ON true
