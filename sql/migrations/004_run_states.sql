-- Run states that tell the truth:
--   running      a process is working on it (owner_host / owner_pid say which)
--   succeeded    every scene asked for was stored
--   incomplete   not every scene asked for was stored: scenes left unfinished (scenes_left; the next
--                ingest finishes them) or files refused as bad input (error says how many; see the scenes)
--   failed       the run could not do its work (error says why)
--   interrupted  stopped by SIGINT/SIGTERM
--   abandoned    left 'running' by a process that no longer exists (found by a later command)
ALTER TABLE runs DROP CONSTRAINT runs_status_check;
ALTER TABLE runs ADD CONSTRAINT runs_status_check
  CHECK (status IN ('running', 'succeeded', 'incomplete', 'failed', 'interrupted', 'abandoned'));
ALTER TABLE runs ADD COLUMN owner_host text;
ALTER TABLE runs ADD COLUMN owner_pid integer CHECK (owner_pid > 0);
ALTER TABLE runs ADD COLUMN scenes_asked integer CHECK (scenes_asked >= 0);
ALTER TABLE runs ADD COLUMN scenes_left integer CHECK (scenes_left >= 0);

-- Warnings found while reading a scene that did not stop it from being used
-- (for example a GDAL_METADATA block that could not be parsed): a JSON array of strings.
ALTER TABLE scenes ADD COLUMN warnings jsonb NOT NULL DEFAULT '[]'::jsonb
  CHECK (jsonb_typeof(warnings) = 'array');
