-- scene_districts: each district's zonal row in the given scenes, with what the scene
-- listing needs to say why that scene gives the district no value: the pixel counts,
-- whether a mean exists, and the minimum valid fraction the scene was judged by (that of
-- the run that last derived values from this scene for this district, else of the run
-- that computed the zonal row; NULL when neither run stored one). Only this scene's own
-- row counts: a derived row's reason may be about the other pass of its pair.
--   $1  scene ids (bigint[])
-- Ordered by scene id, district id.
SELECT z.scene_id,
       z.district_id,
       z.valid_fraction,
       z.pixels,
       z.mean_k IS NOT NULL AS has_mean,
       z.nodata_count,
       z.masked_count,
       z.implausible_count,
       coalesce(
         (SELECT CASE WHEN jsonb_typeof(r.parameters -> 'minValidFraction') = 'number'
                      THEN (r.parameters ->> 'minValidFraction')::double precision END
          FROM derived_metrics m JOIN runs r ON r.id = m.run_id
          WHERE m.district_id = z.district_id
            AND (m.day_scene_id = z.scene_id OR m.night_scene_id = z.scene_id)
          ORDER BY m.run_id DESC
          LIMIT 1),
         (SELECT CASE WHEN jsonb_typeof(r.parameters -> 'minValidFraction') = 'number'
                      THEN (r.parameters ->> 'minValidFraction')::double precision END
          FROM runs r WHERE r.id = z.run_id)
       ) AS min_valid_fraction
FROM zonal_stats z
WHERE z.scene_id = ANY ($1::bigint[])
ORDER BY z.scene_id, z.district_id COLLATE "C"
