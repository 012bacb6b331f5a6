-- scene_districts: each district's share of valid pixels in the given scenes, and
-- why a value is missing: no valid pixel in the zonal statistics, else the stored
-- reasons of the derived rows the scene took part in (NULL when every value was derived).
--   $1  scene ids (bigint[])
-- Ordered by scene id, district id.
SELECT z.scene_id,
       z.district_id,
       z.valid_fraction,
       CASE
         WHEN z.mean_k IS NULL THEN
           'no valid pixels (nodata ' || z.nodata_count || ', masked ' || z.masked_count ||
           ', implausible ' || z.implausible_count || ' of ' || z.pixels || ')'
         ELSE (SELECT string_agg(DISTINCT coalesce(m.reason, m.status), '; ')
               FROM derived_metrics m
               WHERE m.district_id = z.district_id
                 AND (m.day_scene_id = z.scene_id OR m.night_scene_id = z.scene_id)
                 AND (m.reason IS NOT NULL OR m.status <> 'ok'))
       END AS missing_reason
FROM zonal_stats z
WHERE z.scene_id = ANY ($1::bigint[])
ORDER BY z.scene_id, z.district_id COLLATE "C"
