/**
 * `node dist/test/bench/thermal.js`: what turning Level-1 thermal DN into LST
 * block by block costs in the zonal step. The peer, measured in the same run,
 * is the same scene already as float32 LST through the same zonal code. Three
 * cases on a 3000 x 3000 scene with 36 districts: float32 LST; thermal DN with
 * a constant emissivity and no atmosphere; thermal DN with an NDVI raster and
 * an atmosphere (RTE). Median CPU seconds of this process (user + system) over
 * three runs after a warm-up. Figures, not assertions.
 */
import { mkdtemp, rm } from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { writeGeoTiff } from '../../workers/core/raster/write.js';
import { openRaster } from '../../workers/core/raster/index.js';
import { zonalScene, zonalThermalScene, type ThermalZonalInput, type ZonalTarget } from '../../workers/core/zonal/index.js';
import { TIRS_CONSTANTS } from '../../workers/core/thermal/index.js';
import { median } from './timing.js';

const SIZE = 3000;
const C = TIRS_CONSTANTS.LANDSAT_8.B10;

async function cpuSeconds(fn: () => Promise<unknown>): Promise<number> {
  const t0 = process.cpuUsage();
  await fn();
  const d = process.cpuUsage(t0);
  return (d.user + d.system) / 1e6;
}

async function main(): Promise<void> {
  const dir = await mkdtemp(path.join(os.tmpdir(), 'hl-thermal-bench-'));
  try {
    const n = SIZE * SIZE;
    const dn = new Uint16Array(n), lst = new Float32Array(n), ndvi = new Float32Array(n);
    for (let k = 0; k < n; k++) {
      const t = 285 + 10 * Math.sin(k / 997); // invented temperatures
      dn[k] = Math.round((0.97 * C.k1 / Math.expm1(C.k2 / t) - C.al) / C.ml);
      lst[k] = t;
      ndvi[k] = 0.6 * Math.sin(k / 313) + 0.2;
    }
    const base = { width: SIZE, height: SIZE, transform: { a: 30, b: 0, c: 500000, d: 0, e: -30, f: 4900000 }, epsg: 32625, layout: { tiled: true as const, tileWidth: 256, tileHeight: 256 } };
    const p = (name: string) => path.join(dir, name);
    await writeGeoTiff(p('dn.tif'), { ...base, data: dn, predictor: 2 });
    await writeGeoTiff(p('lst.tif'), { ...base, data: lst, predictor: 3 });
    await writeGeoTiff(p('ndvi.tif'), { ...base, data: ndvi, predictor: 3 });
    const side = (SIZE * 30) / 6;
    const targets: ZonalTarget[] = [];
    for (let i = 0; i < 6; i++) {
      for (let j = 0; j < 6; j++) {
        const x0 = 500000 + i * side + 10, y0 = 4900000 - j * side - 10, s = side - 100;
        targets.push({ id: `d${i}${j}`, geometry: [[[[x0, y0], [x0 + s, y0], [x0 + s, y0 - s], [x0, y0 - s], [x0, y0]]]] });
      }
    }
    const options = { coverage: 'centre' as const };
    const fallback = { value: 0.97, source: 'constant' };
    const plain: ThermalZonalInput = { constants: C, atmosphere: null, sceneEmissivity: null, districtEmissivity: {}, fallback };
    const rte: ThermalZonalInput = {
      constants: C, atmosphere: { transmittance: 0.9, upwellingRadiance: 0.7, downwellingRadiance: 1.2 },
      sceneEmissivity: { kind: 'ndvi', path: p('ndvi.tif'), source: 'ndvi' }, districtEmissivity: {}, fallback,
    };
    const cases: [string, () => Promise<unknown>][] = [
      ['float32 LST scene (peer)', async () => { const r = await openRaster(p('lst.tif')); try { await zonalScene(r, targets, options); } finally { await r.close(); } }],
      ['thermal DN, constant emissivity', async () => { const r = await openRaster(p('dn.tif')); try { await zonalThermalScene(r, targets, options, plain); } finally { await r.close(); } }],
      ['thermal DN, NDVI raster + RTE', async () => { const r = await openRaster(p('dn.tif')); try { await zonalThermalScene(r, targets, options, rte); } finally { await r.close(); } }],
    ];
    const seconds: number[] = [];
    for (const [, fn] of cases) {
      await fn(); // warm-up
      const runs: number[] = [];
      for (let i = 0; i < 3; i++) runs.push(await cpuSeconds(fn));
      seconds.push(median(runs));
    }
    const mpx = n / 1e6;
    console.log(`zonal step, ${SIZE} x ${SIZE} (${mpx} Mpixel), ${targets.length} districts, median CPU s of 3 runs:`);
    cases.forEach(([name], i) => {
      console.log(`  ${name.padEnd(34)} ${seconds[i].toFixed(2)} s  ${(mpx / seconds[i]).toFixed(1)} Mpixel/s  x${(seconds[i] / seconds[0]).toFixed(2)} of the peer`);
    });
  } finally {
    await rm(dir, { recursive: true, force: true });
  }
}

main().catch((e) => {
  console.error(e);
  process.exitCode = 1;
});
