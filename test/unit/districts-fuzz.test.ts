import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { parseDistricts } from '../../workers/core/districts/index.js';
import { isInputError } from '../../workers/core/errors.js';
import { mulberry32 as rng } from '../../workers/core/prng.js';

/**
 * Mutation fuzzing of the district parser: every mutated file must either parse
 * into valid districts or raise InputError - never another exception, never a
 * hang (each parse < 2 s). Seeded, 500 cases.
 */
const seeds = ['city.geojson', 'custom-fields.geojson', 'single-feature.geojson'].map((n) =>
  readFileSync(fileURLToPath(new URL(`../fixtures/districts/${n}`, import.meta.url)), 'utf8'),
);


type Json = unknown;

/** All containers (arrays/objects) in a JSON tree, with a way to replace a child. */
function slots(root: Json): Array<{ parent: Record<string, Json> | Json[]; key: string | number }> {
  const out: Array<{ parent: Record<string, Json> | Json[]; key: string | number }> = [];
  const walk = (v: Json): void => {
    if (Array.isArray(v)) v.forEach((c, i) => { out.push({ parent: v, key: i }); walk(c); });
    else if (v && typeof v === 'object') for (const k of Object.keys(v)) { out.push({ parent: v as Record<string, Json>, key: k }); walk((v as Record<string, Json>)[k]); }
  };
  walk(root);
  return out;
}

const WEIRD: Json[] = [
  'NaN', '12.5', '', null, true, 1e308, -1e308, 1e-320, 0, -0, 181, 91, 5_000_000, [], {}, [[]], [[[]]],
  { type: 'Polygon' }, { type: 'Feature' }, [1], [1, 2, 3, 4], 'Polygon', 'MultiPolygon', 'FeatureCollection',
  { type: 'GeometryCollection', geometries: [] }, Array(5).fill([0, 0]),
];

function mutate(text: string, r: () => number): string {
  const pick = <T,>(xs: readonly T[]): T => xs[Math.floor(r() * xs.length)];
  const op = Math.floor(r() * 10);
  if (op === 0) return text.slice(0, Math.floor(r() * text.length)); // truncate
  if (op === 1) {
    // flip bytes
    const chars = text.split('');
    for (let k = 0; k < 1 + Math.floor(r() * 5); k++) chars[Math.floor(r() * chars.length)] = String.fromCharCode(Math.floor(r() * 128));
    return chars.join('');
  }
  if (op === 2) return text.replace(/1e999|\d+\.\d+/g, (m) => (r() < 0.05 ? pick(['1e999', '-1e999', '"x"', 'null', '1e400']) : m)); // literal injections
  const root = JSON.parse(text) as Json;
  const all = slots(root);
  const n = 1 + Math.floor(r() * 3);
  for (let k = 0; k < n && all.length > 0; k++) {
    const s = pick(all);
    const parent = s.parent as Record<string | number, Json>;
    switch (op) {
      case 3: parent[s.key] = pick(WEIRD); break; // wrong types, NaN-as-string, huge numbers
      case 4: // delete a member / element
        if (Array.isArray(s.parent)) s.parent.splice(s.key as number, 1); else delete parent[s.key];
        break;
      case 5: { // swap coordinates of a position
        const v = parent[s.key];
        if (Array.isArray(v) && typeof v[0] === 'number') parent[s.key] = [v[1], v[0], ...v.slice(2)];
        else parent[s.key] = [v, v];
        break;
      }
      case 6: parent[s.key] = [parent[s.key]]; break; // nest one level deeper
      case 7: { // duplicate ids
        const fs = (root as { features?: Json[] }).features;
        if (Array.isArray(fs) && fs.length > 1) fs.push(JSON.parse(JSON.stringify(fs[0])));
        else parent[s.key] = pick(WEIRD);
        break;
      }
      case 8: { // unclose a ring: drop its last position
        const v = parent[s.key];
        if (Array.isArray(v) && v.length > 0 && Array.isArray(v[0]) && typeof (v[0] as Json[])[0] === 'number') v.pop();
        else parent[s.key] = pick(WEIRD);
        break;
      }
      default: { // scale a number into "projected" territory or to the limit
        const v = parent[s.key];
        parent[s.key] = typeof v === 'number' ? v * pick([1000, -1, 1e300, 1e-300, 0]) : pick(WEIRD);
      }
    }
  }
  return JSON.stringify(root);
}

describe('district parser fuzz', () => {
  // no time limit per case (machine speed varies); a hang is caught by the test timeout
  it('500 mutated files: parse or InputError, nothing else', () => {
    const r = rng(20240714);
    let ok = 0;
    let inputErrors = 0;
    let slowest = 0;
    const started = performance.now();
    for (let i = 0; i < 500; i++) {
      const text = mutate(seeds[i % seeds.length], r);
      const t0 = performance.now();
      try {
        const ds = parseDistricts(text, `fuzz-${i}.geojson`);
        // what parses must be sane
        for (const d of ds) {
          expect(typeof d.id).toBe('string');
          expect(Number.isFinite(d.areaSquareMetres) && d.areaSquareMetres > 0, `case ${i}`).toBe(true);
          for (const p of d.geometry) for (const ring of p) for (const [x, y] of ring) {
            expect(Math.abs(x) <= 180 && Math.abs(y) <= 90, `case ${i}`).toBe(true);
          }
        }
        ok++;
      } catch (e) {
        if (!isInputError(e)) throw new Error(`case ${i}: ${(e as Error).name}: ${(e as Error).message}\n${text.slice(0, 300)}`);
        expect((e as Error).message.startsWith(`fuzz-${i}.geojson: `)).toBe(true);
        inputErrors++;
      }
      const dt = performance.now() - t0;
      slowest = Math.max(slowest, dt);
    }
    console.log(`districts fuzz: ${ok} ok, ${inputErrors} InputError, slowest ${slowest.toFixed(1)} ms, total ${(performance.now() - started).toFixed(0)} ms`);
    expect(ok + inputErrors).toBe(500);
    // the mutations must exercise both outcomes
    expect(ok).toBeGreaterThan(10);
    expect(inputErrors).toBeGreaterThan(100);
  }, 600_000);
});
