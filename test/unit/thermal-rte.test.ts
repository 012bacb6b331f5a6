/**
 * Level-1 thermal DN to LST: the radiative transfer equation (RTE) inversion, the
 * scene metadata file, the choice of constants and of the emissivity input, and the
 * block-by-block LST raster.
 *
 * Sources of the expected values:
 * - Landsat 8 / Landsat 9 TIRS band-10 constants: the scene metadata (MTL) files of
 *   Landsat 8 and Landsat 9, fields RADIANCE_MULT_BAND_10 / RADIANCE_ADD_BAND_10 (group
 *   LEVEL1_RADIOMETRIC_RESCALING) and K1_CONSTANT_BAND_10 / K2_CONSTANT_BAND_10 (group
 *   LEVEL1_THERMAL_CONSTANTS); L = ML * Qcal + AL and T = K2 / ln(K1 / L + 1) as in the
 *   USGS Landsat 8 (L8) Data Users Handbook (LSDS-1574; document number from memory).
 * - Band 10 limits 10.60-11.19 um: USGS Landsat 8 band designations (from memory).
 * - CODATA 2018 exact SI constants h, c, k_B (first radiation constant c1L = 2 h c^2,
 *   second c2 = h c / k_B).
 * - The RTE L = tau (eps B(Ts) + (1 - eps) L_down) + L_up: Jiménez-Muñoz & Sobrino 2003,
 *   JGR 108(D22):4688, eq. 1; Barsi, Barker & Schott 2003, IGARSS (citations from memory).
 *   No published worked example with printed numbers could be confirmed, so the
 *   inversion is checked by a round trip through a forward model written out here.
 */
import { describe, expect, it } from 'vitest';
import { InputError } from '../../workers/core/errors.js';
import {
  TIRS_CONSTANTS,
  acquisitionTimeFromMetadata,
  atSensorRadiance,
  chooseSceneEmissivity,
  chooseThermalConstants,
  emissivityFromNdviOnly,
  lstFromRadiance,
  metadataFileCandidates,
  parseSceneMetadata,
  thermalBandFromName,
  thermalConstantsFromMetadata,
  thermalLstRaster,
  type TirsBandConstants,
} from '../../workers/core/thermal/index.js';
import type { RasterFile, RasterHeader } from '../../workers/core/raster/index.js';

const L8 = TIRS_CONSTANTS.LANDSAT_8.B10;
const L9 = TIRS_CONSTANTS.LANDSAT_9.B10;

/** Forward model written out for the test: B(T) = K1 / (exp(K2/T) - 1), the RTE, then DN = round((L - AL) / ML). */
function forwardDn(t: number, eps: number, tau: number, up: number, down: number, c: TirsBandConstants): number {
  const b = c.k1 / (Math.exp(c.k2 / t) - 1);
  const l = tau * (eps * b + (1 - eps) * down) + up;
  return Math.round((l - c.al) / c.ml);
}

describe('published per-spacecraft constants', () => {
  it('band 10 of each spacecraft as in its scene metadata file (RADIANCE_MULT/ADD_BAND_10, K1/K2_CONSTANT_BAND_10)', () => {
    // Landsat 8 scene MTL: RADIANCE_MULT_BAND_10 = 3.3420E-04, RADIANCE_ADD_BAND_10 = 0.10000,
    // K1_CONSTANT_BAND_10 = 774.8853, K2_CONSTANT_BAND_10 = 1321.0789
    expect(L8).toEqual({ ml: 3.342e-4, al: 0.1, k1: 774.8853, k2: 1321.0789 });
    // Landsat 9 scene MTL: RADIANCE_MULT_BAND_10 = 3.8000E-04, RADIANCE_ADD_BAND_10 = 0.10000,
    // K1_CONSTANT_BAND_10 = 799.0284, K2_CONSTANT_BAND_10 = 1329.2405
    expect(L9).toEqual({ ml: 3.8e-4, al: 0.1, k1: 799.0284, k2: 1329.2405 });
  });

  it('K1 and K2 are Planck constants at an effective wavelength inside band 10 (CODATA 2018; band limits 10.60-11.19 um, from memory)', () => {
    const h = 6.62607015e-34, c = 299792458, kB = 1.380649e-23; // CODATA 2018, exact
    const c2 = ((h * c) / kB) * 1e6; // um K
    const c1L = 2 * h * c * c * 1e24; // W um^4 m^-2 sr^-1 (1e24: m^4 -> um^4, per um)
    for (const k of [L8, L9]) {
      const lambda = c2 / k.k2; // effective wavelength, um
      expect(lambda).toBeGreaterThan(10.6);
      expect(lambda).toBeLessThan(11.19);
      // K1 = c1L / lambda^5 at the same wavelength, within 1 % (band averaging; derived)
      expect(Math.abs(c1L / lambda ** 5 / k.k1 - 1)).toBeLessThan(0.01);
    }
  });
});

describe('RTE inversion', () => {
  const atmospheres = [
    { tau: 1, up: 0, down: 0 }, // no atmosphere: the emissivity correction alone
    { tau: 0.9, up: 0.7, down: 1.2 },
    { tau: 0.7, up: 2.2, down: 3.5 },
  ];
  it.each([['LANDSAT_8', L8], ['LANDSAT_9', L9]] as const)('round trip DN <-> LST within 0.01 K over 250-340 K (%s)', (_name, c) => {
    let worst = 0;
    for (const a of atmospheres) {
      for (const eps of [0.95, 0.97, 0.99, 1]) {
        for (let t = 250; t <= 340; t += 0.25) {
          const dn = forwardDn(t, eps, a.tau, a.up, a.down, c);
          const back = lstFromRadiance(c.ml * dn + c.al, eps, { transmittance: a.tau, upwellingRadiance: a.up, downwellingRadiance: a.down }, c);
          worst = Math.max(worst, Math.abs(back - t));
        }
      }
    }
    // the DN quantisation alone allows a few mK (derived from dL/dT at 250 K); 0.01 K is the requirement
    expect(worst).toBeLessThan(0.01);
    expect(worst).toBeGreaterThan(0); // the DN really are quantised
  });

  it('the forward model of the module is the one written out above (derived, same formulas)', () => {
    const atm = { transmittance: 0.85, upwellingRadiance: 1.1, downwellingRadiance: 1.8 };
    const b = L8.k1 / (Math.exp(L8.k2 / 295) - 1);
    expect(atSensorRadiance(295, 0.97, atm, L8)).toBeCloseTo(0.85 * (0.97 * b + 0.03 * 1.8) + 1.1, 12);
  });

  it('without atmosphere and with eps = 1 the LST is the brightness temperature (handbook: T = K2 / ln(K1 / L + 1))', () => {
    const l = L8.ml * 30000 + L8.al;
    expect(lstFromRadiance(l, 1, { transmittance: 1, upwellingRadiance: 0, downwellingRadiance: 0 }, L8)).toBeCloseTo(L8.k2 / Math.log(L8.k1 / l + 1), 10);
  });

  it('an atmosphere stronger than the signal gives NaN, not a number (derived: B <= 0 has no temperature)', () => {
    expect(lstFromRadiance(0.5, 0.97, { transmittance: 0.6, upwellingRadiance: 2, downwellingRadiance: 3 }, L8)).toBeNaN();
  });
});

const MTL = `GROUP = LANDSAT_METADATA_FILE
  GROUP = IMAGE_ATTRIBUTES
    SPACECRAFT_ID = "LANDSAT_9"
    DATE_ACQUIRED = 2024-08-03
    SCENE_CENTER_TIME = "03:12:45.1234567Z"
  END_GROUP = IMAGE_ATTRIBUTES
  GROUP = LEVEL1_RADIOMETRIC_RESCALING
    RADIANCE_MULT_BAND_10 = 3.8000E-04
    RADIANCE_ADD_BAND_10 = 0.10000
  END_GROUP = LEVEL1_RADIOMETRIC_RESCALING
  GROUP = LEVEL1_THERMAL_CONSTANTS
    K1_CONSTANT_BAND_10 = 799.0284
    K2_CONSTANT_BAND_10 = 1329.2405
  END_GROUP = LEVEL1_THERMAL_CONSTANTS
END_GROUP = LANDSAT_METADATA_FILE
END
`;

describe('scene metadata file', () => {
  it('reads the band-10 constants, the spacecraft and the acquisition time (fields of the published format)', () => {
    const f = parseSceneMetadata(MTL, 'x_MTL.txt');
    expect(thermalConstantsFromMetadata(f, 'B10')).toEqual(L9);
    expect(thermalConstantsFromMetadata(f, 'B11')).toBeNull();
    expect(acquisitionTimeFromMetadata(f)).toBe('2024-08-03T03:12:45Z');
  });

  it('refuses a malformed file, naming it', () => {
    expect(() => parseSceneMetadata('GROUP = A\n  X = 1\n', 'bad_MTL.txt')).toThrow(/bad_MTL\.txt.*never closed/);
    expect(() => parseSceneMetadata('GROUP = A\nEND_GROUP = B\nEND\n', 'bad_MTL.txt')).toThrow(/closes group B but A is open/);
    expect(() => parseSceneMetadata('just text\n', 'bad_MTL.txt')).toThrow(InputError);
    const partial = parseSceneMetadata('K1_CONSTANT_BAND_10 = 774.8853\nEND\n', 'part_MTL.txt');
    expect(() => thermalConstantsFromMetadata(partial, 'B10')).toThrow(/part_MTL\.txt.*lacks RADIANCE_MULT_BAND_10, RADIANCE_ADD_BAND_10, K2_CONSTANT_BAND_10/);
    const nan = parseSceneMetadata(MTL.replace('799.0284', '"n/a"'), 'nan_MTL.txt');
    expect(() => thermalConstantsFromMetadata(nan, 'B10')).toThrow(/nan_MTL\.txt.*K1_CONSTANT_BAND_10/);
  });

  it('is found by the scene name, and the band from it (common practice, no source)', () => {
    expect(metadataFileCandidates('/d/S1_B10.TIF')).toEqual(['/d/S1_B10_MTL.txt', '/d/S1_B10_mtl.txt', '/d/S1_MTL.txt', '/d/S1_mtl.txt']);
    expect(thermalBandFromName('/d/S1_B11.TIF')).toBe('B11');
    expect(thermalBandFromName('/d/S1_ST_B10.TIF')).toBeNull(); // a Level-2 surface temperature band is LST, not DN
  });
});

describe('choice of constants', () => {
  const base = { scenePath: '/d/s_B10.tif', band: 'B10' as const, lookedFor: ['/d/s_MTL.txt'] };
  it('metadata file, then manifest, then the built-in table with a notice', () => {
    const f = parseSceneMetadata(MTL, '/d/s_MTL.txt');
    expect(chooseThermalConstants({ ...base, sceneSpacecraft: null, metadata: f, manifest: L8 }).source).toBe('metadata file /d/s_MTL.txt');
    expect(chooseThermalConstants({ ...base, sceneSpacecraft: null, metadata: null, manifest: L8 }).source).toBe('manifest');
    const table = chooseThermalConstants({ ...base, sceneSpacecraft: 'LANDSAT_8', metadata: null, manifest: null });
    expect(table.constants).toEqual(L8);
    expect(table.notice).toMatch(/built-in LANDSAT_8 band 10 constants/);
  });
  it('never one spacecraft\'s constants for another, and no constants anywhere is refused', () => {
    const f = parseSceneMetadata(MTL, '/d/s_MTL.txt');
    expect(() => chooseThermalConstants({ ...base, sceneSpacecraft: 'LANDSAT_8', metadata: f, manifest: null }))
      .toThrow(/\/d\/s_MTL\.txt: is the metadata of LANDSAT_9 but the scene \/d\/s_B10\.tif is from LANDSAT_8/);
    expect(() => chooseThermalConstants({ ...base, sceneSpacecraft: null, metadata: null, manifest: null }))
      .toThrow(/\/d\/s_B10\.tif: thermal scene without band 10 constants/);
  });
});

describe('choice of the emissivity input', () => {
  const day = (path: string, at: string) => ({ scenePath: path, acquiredAt: at, ndvi: `${path}.ndvi` });
  it('own raster, own constant, own NDVI, then the nearest day scene within the window', () => {
    expect(chooseSceneEmissivity('/n', { emissivityRaster: '/e.tif', ndvi: '/x' }, null, [], 16)?.kind).toBe('raster');
    expect(chooseSceneEmissivity('/n', { emissivity: 0.96 }, null, [], 16)).toMatchObject({ kind: 'constant', value: 0.96 });
    const cands = [day('/a', '2024-07-01T12:00:00Z'), day('/b', '2024-07-10T12:00:00Z'), day('/c', '2024-07-30T12:00:00Z')];
    expect(chooseSceneEmissivity('/n', {}, '2024-07-11T02:00:00Z', cands, 16)).toMatchObject({ kind: 'ndvi', path: '/b.ndvi' });
    expect(chooseSceneEmissivity('/n', {}, '2024-08-20T02:00:00Z', cands, 16)).toBeNull(); // 20.6 days from /c
  });
  it('NDVI-threshold emissivity without red reflectance (Sobrino et al. 2004, simplified form; soil 0.97 and water 0.99 from memory)', () => {
    expect(emissivityFromNdviOnly(0.35)).toBeCloseTo(0.004 * 0.25 + 0.986, 12); // Pv = ((0.35 - 0.2) / 0.3)^2 = 0.25
    expect(emissivityFromNdviOnly(0.8)).toBe(0.99);
    expect(emissivityFromNdviOnly(0.1)).toBe(0.97);
    expect(emissivityFromNdviOnly(-0.3)).toBe(0.99);
  });
});

describe('LST raster over DN blocks', () => {
  /** A 4 x 2 raster in memory (UInt16 DN, or Float64 for auxiliary values), two blocks of 2 x 2. */
  function memoryDn(values: number[], name = '/mem/dn_B10.tif', float = false): RasterFile {
    const header = {
      path: name, width: 4, height: 2, bands: 1, sampleFormat: float ? 'float' : 'uint', bitsPerSample: float ? 64 : 16,
      transform: { a: 30, b: 0, c: 500000, d: 0, e: -30, f: 4900000 }, epsg: 32625, crsDefinition: '+proj=utm +zone=25 +datum=WGS84 +units=m +no_defs',
      nodata: null, scale: 1, offset: 0, acquiredAt: null, metadata: {}, mask: null, alphaBand: null, warnings: [],
      blockWidth: 2, blockHeight: 2, tiled: true, compression: 1, predictor: 1,
    } as unknown as RasterHeader;
    const data = float ? Float64Array.from(values) : Uint16Array.from(values);
    const cut = (w: { colOff: number; rowOff: number; width: number; height: number }) => {
      const out = float ? new Float64Array(w.width * w.height) : new Uint16Array(w.width * w.height);
      for (let r = 0; r < w.height; r++) for (let c = 0; c < w.width; c++) out[r * w.width + c] = data[(w.rowOff + r) * 4 + w.colOff + c];
      return out;
    };
    return {
      header,
      async *blocks() {
        for (const colOff of [0, 2]) yield { window: { colOff, rowOff: 0, width: 2, height: 2 }, data: cut({ colOff, rowOff: 0, width: 2, height: 2 }), stride: 2 };
      },
      readWindow: async (w) => cut(w),
      validMask: async () => null,
      close: async () => undefined,
    };
  }

  it('gives the RTE LST per pixel, NaN for fill DN 0 (the handbook\'s fill value, from memory)', async () => {
    const atm = { transmittance: 0.88, upwellingRadiance: 0.9, downwellingRadiance: 1.5 };
    const temps = [280, 290, 300, 0, 310, 320, 330, 295];
    const dn = temps.map((t) => (t === 0 ? 0 : forwardDn(t, 0.98, atm.transmittance, atm.upwellingRadiance, atm.downwellingRadiance, L8)));
    const lst = thermalLstRaster(memoryDn(dn), { constants: L8, atmosphere: atm, emissivity: { kind: 'constant', value: 0.98 } });
    const got: number[] = new Array(8);
    for await (const b of lst.blocks({ colOff: 0, rowOff: 0, width: 4, height: 2 })) {
      for (let r = 0; r < 2; r++) for (let c = 0; c < 2; c++) got[r * 4 + b.window.colOff + c] = b.data[r * b.stride + c];
    }
    temps.forEach((t, i) => {
      if (t === 0) expect(got[i]).toBeNaN();
      else expect(Math.abs(got[i] - t)).toBeLessThan(0.01);
    });
    expect(lst.header.sampleFormat).toBe('float');
  });

  it('per-pixel atmosphere rasters give each pixel its own RTE inversion; a bad value is refused naming its raster', async () => {
    const temps = [280, 290, 300, 305, 310, 320, 330, 295];
    const tau = [0.95, 0.9, 0.85, 0.8, 0.75, 0.7, 0.9, 0.88];
    const up = tau.map((t) => (1 - t) * 7), down = up.map((u) => u * 1.6);
    const dn = temps.map((t, i) => forwardDn(t, 0.97, tau[i], up[i], down[i], L8));
    const atmosphere = (tauValues: number[]) => ({
      kind: 'rasters' as const,
      transmittance: memoryDn(tauValues, '/mem/tau.tif', true), upwelling: memoryDn(up, '/mem/up.tif', true), downwelling: memoryDn(down, '/mem/down.tif', true),
    });
    const lst = thermalLstRaster(memoryDn(dn), { constants: L8, atmosphere: atmosphere(tau), emissivity: { kind: 'constant', value: 0.97 } });
    const got = await lst.readWindow({ colOff: 0, rowOff: 0, width: 4, height: 2 });
    temps.forEach((t, i) => expect(Math.abs(got[i] - t)).toBeLessThan(0.01));
    const bad = thermalLstRaster(memoryDn(dn), { constants: L8, atmosphere: atmosphere(tau.map((t, i) => (i === 5 ? 1.2 : t))), emissivity: { kind: 'constant', value: 0.97 } });
    await expect(bad.readWindow({ colOff: 0, rowOff: 0, width: 4, height: 2 })).rejects.toThrow(/^\/mem\/tau\.tif: atmospheric transmittance 1\.2 at row 1, column 1 is not in \(0, 1\]/);
  });

  it('red and near-infrared reflectance give each pixel its NDVI-threshold emissivity (Sobrino et al. 2004: soil line 0.979 - 0.035 red, 0.004 Pv + 0.986, 0.99; water 0.99 below NDVI 0, from memory)', async () => {
    const red = [0.3, 0.1, 0.05, 0.05, 0.3, 0.1, 0.05, 0.05];
    const nir = [0.35, 0.2, 0.45, 0.02, 0.35, 0.2, 0.45, 0.02];
    // NDVI 0.0769 (soil line), 0.3333 (Pv = (0.1333 / 0.3)^2), 0.8 (vegetation), -0.4286 (water); derived by hand
    const eps = [0.979 - 0.035 * 0.3, 0.004 * ((1 / 3 - 0.2) / 0.3) ** 2 + 0.986, 0.99, 0.99];
    const temps = [285, 290, 295, 300, 305, 310, 315, 320];
    const dn = temps.map((t, i) => forwardDn(t, eps[i % 4], 1, 0, 0, L8));
    const lst = thermalLstRaster(memoryDn(dn), {
      constants: L8, atmosphere: null,
      emissivity: { kind: 'reflectance', red: memoryDn(red, '/mem/red.tif', true), nir: memoryDn(nir, '/mem/nir.tif', true) },
    });
    const got = await lst.readWindow({ colOff: 0, rowOff: 0, width: 4, height: 2 });
    temps.forEach((t, i) => expect(Math.abs(got[i] - t)).toBeLessThan(0.01));
  });

  it('refuses an emissivity outside (0.8, 1], naming where it came from', () => {
    expect(() => thermalLstRaster(memoryDn(new Array(8).fill(1)), { constants: L8, atmosphere: null, emissivity: { kind: 'constant', value: 0.75 } }))
      .toThrow(/\/mem\/dn_B10\.tif \(emissivity\): emissivity 0\.75 is outside \(0\.8, 1\]/);
  });
});
