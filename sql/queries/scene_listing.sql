-- scene_listing: scenes in acquisition order (scenes without a time last), then id,
-- one page after a cursor, with the filters of the scenes route; a thermal scene's columns on how
-- its LST was made (migration 005) come along, NULL for other kinds.
--   $1  status ('registered' | 'processed' | 'failed') or NULL
--   $2  kind ('lst' | 'albedo' | 'qa' | 'thermal') or NULL
--   $3  pass ('day' | 'night') or NULL
--   $4  acquired at or after (timestamptz, UTC) or NULL
--   $5  acquired before (timestamptz, UTC) or NULL
--   $6  cursor: acquisition time of the last row of the previous page ('infinity' for a scene
--       without one), or NULL for the first page
--   $7  cursor: id of the last row of the previous page (with $6)
--   $8  rows to return (the caller asks for one more than it shows, to know whether a page follows)
--   $9  one scene id, or NULL for every scene
SELECT s.id, s.path, s.kind, s.sensor, s.acquired_at, s.pass, s.timing_rating, s.status, s.error, s.warnings,
       s.lst_method, s.atmospheric_correction, s.atmosphere, s.thermal_constants_source, s.emissivity_source
FROM scenes s
WHERE ($1::text IS NULL OR s.status = $1::text)
  AND ($2::text IS NULL OR s.kind = $2::text)
  AND ($3::text IS NULL OR s.pass = $3::text)
  AND ($4::timestamptz IS NULL OR s.acquired_at >= $4::timestamptz)
  AND ($5::timestamptz IS NULL OR s.acquired_at < $5::timestamptz)
  AND ($6::timestamptz IS NULL OR (coalesce(s.acquired_at, 'infinity'::timestamptz), s.id) > ($6::timestamptz, $7::bigint))
  AND ($9::bigint IS NULL OR s.id = $9::bigint)
ORDER BY coalesce(s.acquired_at, 'infinity'::timestamptz), s.id
LIMIT $8::integer
