-- Level-1 thermal scenes (kind 'thermal'): DN of a thermal band, turned into LST on
-- ingest from the band's rescaling and thermal constants, the emissivity and, when
-- given, the atmosphere (transmittance, upwelling and downwelling radiance).
ALTER TABLE scenes DROP CONSTRAINT scenes_kind_check;
ALTER TABLE scenes ADD CONSTRAINT scenes_kind_check CHECK (kind IN ('lst', 'albedo', 'qa', 'thermal'));

-- How a thermal scene's LST was made (NULL for every other kind):
--   lst_method               'rte' (radiative transfer equation inverted with the scene's atmosphere)
--                            or 'emissivity_only' (no atmospheric correction)
--   atmospheric_correction   false exactly when lst_method = 'emissivity_only'
--   atmosphere               {"transmittance", "upwelling_w_m2_sr_um", "downwelling_w_m2_sr_um"} or NULL
--   thermal_constants_source 'metadata file <path>', 'manifest' or 'built-in table (<spacecraft> band <n>)'
--   emissivity_source        where the scene's emissivity came from (per district: zonal_stats.emissivity_source)
ALTER TABLE scenes ADD COLUMN lst_method text CHECK (lst_method IN ('rte', 'emissivity_only'));
ALTER TABLE scenes ADD COLUMN atmospheric_correction boolean;
ALTER TABLE scenes ADD COLUMN atmosphere jsonb CHECK (atmosphere IS NULL OR jsonb_typeof(atmosphere) = 'object');
ALTER TABLE scenes ADD COLUMN thermal_constants_source text;
ALTER TABLE scenes ADD COLUMN emissivity_source text;
-- fingerprint of what the stored statistics were computed from (constants, atmosphere, emissivity
-- inputs): a re-run skips a processed thermal scene only when it is unchanged
ALTER TABLE scenes ADD COLUMN lst_inputs_fingerprint text;
ALTER TABLE scenes ADD CONSTRAINT scenes_thermal_flag CHECK (
  lst_method IS NULL OR atmospheric_correction = (lst_method = 'rte'));

ALTER TABLE zonal_stats ADD COLUMN emissivity_source text;
