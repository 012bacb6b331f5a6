-- last_run: the run that finished last (any end state), or no row. Its id and end time
-- tag every API response (ETag): what the store holds changes only when a run ends.
SELECT id, status, finished_at
FROM runs
WHERE finished_at IS NOT NULL
ORDER BY finished_at DESC, id DESC
LIMIT 1
