/**
 * Pairing rules for derived metrics.
 *
 * Day/night: each day LST scene takes the night LST scene nearest to it in
 * time within a window (default 18 h either side). ATI wants the day and night
 * of one diurnal cycle, as close as possible to the afternoon maximum and the
 * pre-dawn minimum (Kahle & Alley 1985, PE&RS 51); 18 h admits the pre-dawn pass of the
 * same day and the night pass after it, and refuses the next day's. On an
 * exact tie the EARLIER night wins (the pre-dawn minimum that precedes the
 * afternoon maximum of the same cycle). A night scene may serve two days.
 *
 * Albedo: the albedo scene nearest in time within a window (default 32 days).
 */
import { requirePositive } from '../checks.js';
import { ALBEDO_WINDOW_DAYS, PAIRING_WINDOW_HOURS } from '../defaults.js';

export interface TimedScene {
  id: number;
  /** Acquisition time, UTC ISO 8601. */
  acquiredAt: string;
}

const HOUR_MS = 3_600_000;

function nearestWithin<T extends TimedScene>(target: TimedScene, candidates: readonly T[], windowMs: number): T | null {
  const t = Date.parse(target.acquiredAt);
  let best: T | null = null;
  let bestDt = Infinity;
  let bestT = Infinity;
  for (const c of candidates) {
    const ct = Date.parse(c.acquiredAt);
    const dt = Math.abs(ct - t);
    if (dt > windowMs) continue;
    // nearest; on a tie the earlier acquisition, then the lower id (deterministic)
    if (dt < bestDt || (dt === bestDt && (ct < bestT || (ct === bestT && best !== null && c.id < best.id)))) {
      best = c;
      bestDt = dt;
      bestT = ct;
    }
  }
  return best;
}

/**
 * Pair every day scene with its night scene.
 * @returns map from day scene id to the paired night scene (or null when none is within the window)
 * @example pairDayNight([{id:1, acquiredAt:'2024-07-01T13:30:00Z'}], [{id:2, acquiredAt:'2024-07-02T01:30:00Z'}]).get(1)?.id === 2
 */
export function pairDayNight<T extends TimedScene>(days: readonly TimedScene[], nights: readonly T[], windowHours = PAIRING_WINDOW_HOURS): Map<number, T | null> {
  requirePositive(windowHours, 'pairing window (hours)', 'pairDayNight');
  const out = new Map<number, T | null>();
  for (const d of days) out.set(d.id, nearestWithin(d, nights, windowHours * HOUR_MS));
  return out;
}

/** The albedo scene nearest in time to `scene` within `windowDays`, or null. */
export function nearestAlbedo<T extends TimedScene>(scene: TimedScene, albedo: readonly T[], windowDays = ALBEDO_WINDOW_DAYS): T | null {
  requirePositive(windowDays, 'albedo window (days)', 'nearestAlbedo');
  return nearestWithin(scene, albedo, windowDays * 24 * HOUR_MS);
}

/** UTC calendar date (YYYY-MM-DD) of an ISO timestamp. */
export function utcDate(iso: string): string {
  return new Date(Date.parse(iso)).toISOString().slice(0, 10);
}
