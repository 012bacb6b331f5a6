-- scene_progress: how many of the scenes named by files, or lying under folders, are stored as
-- processed and as failed (an ingest job's progress while its run runs).
--   $1  absolute file paths (text[])
--   $2  absolute folder paths, each ending in '/', with LIKE's % _ \ escaped by \ (text[])
SELECT count(*) FILTER (WHERE status = 'processed')::integer AS processed,
       count(*) FILTER (WHERE status = 'failed')::integer AS failed
FROM scenes
WHERE path = ANY ($1::text[])
   OR EXISTS (SELECT 1 FROM unnest($2::text[]) AS f(prefix) WHERE scenes.path LIKE f.prefix || '%')
