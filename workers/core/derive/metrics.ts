/**
 * Derived metrics per district and day scene: day and night LST, apparent
 * thermal inertia and surface urban heat island intensity.
 *
 *   ATI  = (1 - albedo) / (T_day - T_night)   (Price 1977, JGR 82:2582-2590; citation from memory)
 *   SUHI = T_district - T_rural, same scene     (urban minus rural-reference LST, day and night
 *                                                separately; Peng et al. 2012, Environ. Sci.
 *                                                Technol. 46:696-703, pages from memory)
 *
 * A pass whose district (or rural) valid fraction is below `minValidFraction`
 * contributes nothing: its LST, its SUHI and the ATI that needs it stay null,
 * and the row's status says why.
 */
import { nearestAlbedo, pairDayNight, utcDate, type TimedScene } from './pairing.js';
import { atiWithReason } from '../thermal/index.js';
import { lowValidFractionReason } from './pass-reason.js';
import type { Kelvin } from '../units.js';
import { ALBEDO_WINDOW_DAYS, ATI_MIN_DIFFERENCE_KELVIN, MIN_VALID_FRACTION, PAIRING_WINDOW_HOURS } from '../defaults.js';

export interface SceneInfo extends TimedScene {
  kind: 'lst' | 'albedo' | 'qa';
  pass: 'day' | 'night' | null;
}

export interface StatInfo {
  sceneId: number;
  districtId: string;
  mean: number | null;
  validFraction: number | null;
}

export interface DeriveOptions {
  pairingWindowHours: number;
  albedoWindowDays: number;
  minValidFraction: number;
  /** ATI is undefined when T_day - T_night is at or below this (K). */
  minDifferenceKelvin: number;
}

export const DEFAULT_DERIVE_OPTIONS: Readonly<DeriveOptions> = Object.freeze({
  pairingWindowHours: PAIRING_WINDOW_HOURS,
  albedoWindowDays: ALBEDO_WINDOW_DAYS,
  minValidFraction: MIN_VALID_FRACTION,
  minDifferenceKelvin: ATI_MIN_DIFFERENCE_KELVIN,
});

export interface DeriveInput {
  scenes: readonly SceneInfo[];
  stats: readonly StatInfo[];
  /** Districts (not the rural reference), with a fallback albedo from their properties. */
  districts: readonly { id: string; albedoProperty: number | null }[];
  ruralId: string;
  /** Mean albedo per district from one albedo raster for the whole archive, if given. */
  archiveAlbedo?: ReadonlyMap<string, { sceneId: number; mean: number | null; validFraction: number | null }>;
  options?: Partial<DeriveOptions>;
}

export type AlbedoSource = 'scene' | 'archive-raster' | 'property';

/** One district's derived values for one day scene and its night pair, or a night pass alone. */
export interface DerivedRow {
  /** 'YYYY-MM-DD', the UTC date of the day pass (of the night pass for a night-only row). */
  obsDate: string;
  districtId: string;
  /** Null for a night pass no day pass was paired with (then nightSceneId is set). */
  daySceneId: number | null;
  nightSceneId: number | null;
  albedoSceneId: number | null;
  albedoSource: AlbedoSource | null;
  tDayKelvin: Kelvin | null;
  tNightKelvin: Kelvin | null;
  /** Broadband albedo, 0..1. */
  albedo: number | null;
  /** ATI, K⁻¹. */
  atiPerKelvin: number | null;
  suhiDayKelvin: Kelvin | null;
  suhiNightKelvin: Kelvin | null;
  /** 'ok', or the reasons a value is missing, joined by '; '. */
  status: string;
}

/** Compute derived rows for every day LST scene (and every night scene no day took). */
export function deriveMetrics(input: DeriveInput): DerivedRow[] {
  const o = { ...DEFAULT_DERIVE_OPTIONS, ...input.options };
  const statOf = new Map<string, StatInfo>();
  for (const s of input.stats) statOf.set(`${s.sceneId}\u0000${s.districtId}`, s);
  const lookup = (sceneId: number, districtId: string) => statOf.get(`${sceneId}\u0000${districtId}`);

  const byTime = (a: TimedScene, b: TimedScene) => Date.parse(a.acquiredAt) - Date.parse(b.acquiredAt) || a.id - b.id;
  const lst = input.scenes.filter((s) => s.kind === 'lst').sort(byTime);
  const days = lst.filter((s) => s.pass === 'day');
  const nights = lst.filter((s) => s.pass === 'night');
  const albedoScenes = input.scenes.filter((s) => s.kind === 'albedo').sort(byTime);
  const pairs = pairDayNight(days, nights, o.pairingWindowHours);
  const usedNights = new Set<number>();
  for (const n of pairs.values()) if (n) usedNights.add(n.id);

  /** A pass's temperature for a district, or the reason there is none. */
  const passValue = (sceneId: number, districtId: string): { value: number | null; reason?: string } => {
    const s = lookup(sceneId, districtId);
    if (!s || s.mean === null || s.validFraction === null) return { value: null, reason: 'no valid pixels' };
    if (s.validFraction < o.minValidFraction) return { value: null, reason: lowValidFractionReason(s.validFraction, o.minValidFraction) };
    return { value: s.mean };
  };

  const rows: DerivedRow[] = [];
  const emit = (day: SceneInfo | null, night: SceneInfo | null) => {
    const anchor = (day ?? night)!;
    const albedoScene = day ? nearestAlbedo(day, albedoScenes, o.albedoWindowDays) : null;
    const ruralDay = day ? passValue(day.id, input.ruralId) : null;
    const ruralNight = night ? passValue(night.id, input.ruralId) : null;
    for (const d of input.districts) {
      const reasons: string[] = [];
      const tDay = day ? passValue(day.id, d.id) : { value: null, reason: 'no day scene' };
      const tNight = night ? passValue(night.id, d.id) : { value: null, reason: 'no night scene within the pairing window' };
      if (tDay.reason) reasons.push(`day: ${tDay.reason}`);
      if (tNight.reason) reasons.push(`night: ${tNight.reason}`);

      let suhiDay: number | null = null;
      if (tDay.value !== null && ruralDay) {
        if (ruralDay.value === null) reasons.push(`rural day: ${ruralDay.reason}`);
        else suhiDay = tDay.value - ruralDay.value;
      }
      let suhiNight: number | null = null;
      if (tNight.value !== null && ruralNight) {
        if (ruralNight.value === null) reasons.push(`rural night: ${ruralNight.reason}`);
        else suhiNight = tNight.value - ruralNight.value;
      }

      // albedo: nearest albedo scene, else the archive-wide raster, else the district's property
      let albedo: number | null = null;
      let albedoSource: AlbedoSource | null = null;
      let albedoSceneId: number | null = null;
      if (day) {
        const fromScene = albedoScene ? lookup(albedoScene.id, d.id) : undefined;
        const fromArchive = input.archiveAlbedo?.get(d.id);
        if (fromScene && fromScene.mean !== null && (fromScene.validFraction ?? 0) >= o.minValidFraction) {
          albedo = fromScene.mean; albedoSource = 'scene'; albedoSceneId = albedoScene!.id;
        } else if (fromArchive && fromArchive.mean !== null && (fromArchive.validFraction ?? 0) >= o.minValidFraction) {
          albedo = fromArchive.mean; albedoSource = 'archive-raster'; albedoSceneId = fromArchive.sceneId;
        } else if (d.albedoProperty !== null) {
          albedo = d.albedoProperty; albedoSource = 'property';
        }
      }

      let ati: number | null = null;
      if (tDay.value !== null && tNight.value !== null) {
        if (albedo === null) reasons.push('ATI: no albedo (no albedo scene within the window, no archive albedo raster, no albedo property)');
        else {
          const r = atiWithReason({ albedo, dayKelvin: tDay.value, nightKelvin: tNight.value, minDifferenceKelvin: o.minDifferenceKelvin });
          ati = r.value;
          if (r.value === null) reasons.push(`ATI: ${r.reason}`);
        }
      }
      rows.push({
        obsDate: utcDate(anchor.acquiredAt),
        districtId: d.id,
        daySceneId: day?.id ?? null,
        nightSceneId: night?.id ?? null,
        albedoSceneId,
        albedoSource,
        tDayKelvin: tDay.value,
        tNightKelvin: tNight.value,
        albedo,
        atiPerKelvin: ati,
        suhiDayKelvin: suhiDay,
        suhiNightKelvin: suhiNight,
        status: reasons.length ? reasons.join('; ') : 'ok',
      });
    }
  };
  for (const day of days) emit(day, pairs.get(day.id) ?? null);
  for (const night of nights) if (!usedNights.has(night.id)) emit(null, night);
  return rows;
}
