/**
 * Bearer tokens (RFC 6750), compared in constant time: both sides are hashed
 * to SHA-256 first, so the comparison takes the same time whatever the lengths
 * and wherever the first difference lies (crypto.timingSafeEqual needs equal lengths).
 */
import { createHash, timingSafeEqual } from 'node:crypto';

const digest = (s: string) => createHash('sha256').update(s, 'utf8').digest();

/** Whether `given` equals `expected`, in time independent of where they differ. */
export function tokenEquals(given: string, expected: string): boolean {
  return timingSafeEqual(digest(given), digest(expected));
}

/**
 * Check an Authorization header against the accepted tokens (undefined ones
 * skipped): null when one matches, else the status and message to answer with
 * (401: no bearer token given, or a wrong one).
 */
export function checkBearer(header: string | undefined, accepted: readonly (string | undefined)[]): { status: 401; error: string } | null {
  const m = /^Bearer ([\x21-\x7e]{1,512})$/.exec(header ?? '');
  if (!m) return { status: 401, error: 'this route needs the header "Authorization: Bearer <token>"' };
  // every accepted token is compared, so the time does not tell which one matched
  let ok = false;
  for (const t of accepted) if (t !== undefined && tokenEquals(m[1], t)) ok = true;
  return ok ? null : { status: 401, error: 'the bearer token is not the one this server was given' };
}
