-- district_table_scene: one row per district and LST pass (scene) that gave it a derived
-- value, ordered by role (districts, then rural), district id, acquisition time, scene hash.
--   $1  first UTC year of acquisition (integer), or NULL
--   $2  last UTC year of acquisition (integer), or NULL
-- A day pass carries its day LST, day SUHI and the ATI of its pair; a night pass its
-- night LST and night SUHI (a night pass paired with two day passes is one row: its values
-- are the same in both pairs). Values come from derived_metrics as the derive step stored
-- them (a pass below the valid-fraction threshold has NULLs); valid_fraction is the zonal
-- statistics' share of valid pixels. Kelvin (_k), per Kelvin (_per_k).
WITH passes AS (
  SELECT m.district_id, m.day_scene_id AS scene_id,
         m.t_day_k AS lst_day_k, NULL::double precision AS lst_night_k,
         m.suhi_day_k, NULL::double precision AS suhi_night_k, m.ati_per_k
  FROM derived_metrics m
  WHERE m.day_scene_id IS NOT NULL
  UNION ALL
  SELECT n.district_id, n.scene_id, NULL::double precision, n.t_night_k, NULL::double precision, n.suhi_night_k, NULL::double precision
  FROM (
    SELECT DISTINCT ON (m.district_id, m.night_scene_id)
           m.district_id, m.night_scene_id AS scene_id, m.t_night_k, m.suhi_night_k
    FROM derived_metrics m
    WHERE m.night_scene_id IS NOT NULL
    ORDER BY m.district_id, m.night_scene_id, m.obs_date
  ) n
)
SELECT d.id AS district_id, d.name AS district_name, d.role,
       s.content_hash AS scene_hash, s.acquired_at, s.pass, s.timing_rating,
       z.valid_fraction,
       p.lst_day_k, p.lst_night_k, p.suhi_day_k, p.suhi_night_k, p.ati_per_k
FROM passes p
JOIN scenes s ON s.id = p.scene_id
JOIN districts d ON d.id = p.district_id
LEFT JOIN zonal_stats z ON z.scene_id = p.scene_id AND z.district_id = p.district_id
WHERE ($1::integer IS NULL OR extract(year FROM s.acquired_at AT TIME ZONE 'UTC')::integer >= $1::integer)
  AND ($2::integer IS NULL OR extract(year FROM s.acquired_at AT TIME ZONE 'UTC')::integer <= $2::integer)
ORDER BY d.role COLLATE "C", d.id COLLATE "C", s.acquired_at, s.content_hash COLLATE "C"
