-- last_run: the run that finished last (any end state) and the newest run still running.
-- One row, with NULLs where there is no such run. What the store holds changes only when a run
-- ends, so the finished run's id and end time tag every API response (ETag); while a run is
-- still running its rows are arriving, and nothing is tagged or kept.
SELECT f.id, f.status, f.finished_at,
       (SELECT max(id) FROM runs WHERE status = 'running') AS running_id
FROM (SELECT 1) one
LEFT JOIN LATERAL (
  SELECT id, status, finished_at FROM runs WHERE finished_at IS NOT NULL ORDER BY finished_at DESC, id DESC LIMIT 1
) f ON true
