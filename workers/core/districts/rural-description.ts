/**
 * The sentence a run stores about its rural reference (run parameters,
 * `ruralReference.description`), written and read in one place: the pipeline
 * writes it, outputs handed on read it back to name the files by their names
 * alone and to say it in plain words.
 */

/** What a stored rural-reference description says. */
export type RuralDescription =
  | { kind: 'ring'; innerMetres: number; outerMetres: number; waterPath: string | null }
  | { kind: 'polygons'; path: string }
  | { kind: 'other'; text: string };

/** The stored description of a rural reference. */
export function writeRuralDescription(d: Exclude<RuralDescription, { kind: 'other' }>): string {
  if (d.kind === 'polygons') return `user polygon(s) from ${d.path}`;
  const ring = `ring ${d.innerMetres}-${d.outerMetres} m outside the union of the districts`;
  return d.waterPath === null ? ring : `${ring}, water from ${d.waterPath} excluded`;
}

const RING = /^ring ([0-9.]+)-([0-9.]+) m outside the union of the districts(?:, water from (.+) excluded)?$/s;
const POLYGONS = /^user polygon\(s\) from (.+)$/s;

/** A stored description read back (a file path may hold blanks; it is taken whole). */
export function readRuralDescription(text: string): RuralDescription {
  const ring = RING.exec(text);
  if (ring) return { kind: 'ring', innerMetres: Number(ring[1]), outerMetres: Number(ring[2]), waterPath: ring[3] ?? null };
  const polygons = POLYGONS.exec(text);
  if (polygons) return { kind: 'polygons', path: polygons[1] };
  return { kind: 'other', text };
}
