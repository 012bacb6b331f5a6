-- A night pass that no day pass was paired with still gets a derived row (night
-- LST and night SUHI), so day_scene_id may be NULL. A row is keyed by its day
-- scene, or by its night scene when it has no day scene.
ALTER TABLE derived_metrics DROP CONSTRAINT derived_metrics_pkey;
ALTER TABLE derived_metrics ALTER COLUMN day_scene_id DROP NOT NULL;
ALTER TABLE derived_metrics ADD CONSTRAINT derived_metrics_has_scene
  CHECK (day_scene_id IS NOT NULL OR night_scene_id IS NOT NULL);
CREATE UNIQUE INDEX derived_metrics_key
  ON derived_metrics (obs_date, district_id, (coalesce(day_scene_id, -night_scene_id)));

-- Deleting a night scene sets night_scene_id to NULL in the rows paired with a
-- day scene (the foreign key's ON DELETE SET NULL); a night-only row would then
-- have no scene at all, so it goes first.
CREATE FUNCTION derived_metrics_drop_night_only() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
  DELETE FROM derived_metrics WHERE night_scene_id = OLD.id AND day_scene_id IS NULL;
  RETURN OLD;
END;
$$;
CREATE TRIGGER scenes_drop_night_only_rows BEFORE DELETE ON scenes
  FOR EACH ROW EXECUTE FUNCTION derived_metrics_drop_night_only();
