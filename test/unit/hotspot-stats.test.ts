/**
 * Spatial statistics checked against R's spdep (Debian r-cran-spdep, via
 * Rscript, one R process for the whole file) on the same neighbour lists:
 * `localG` on `include.self` neighbours with binary ("B") weights for Gi*,
 * `moran.test` with row-standardised ("W") weights under randomisation and
 * normality (two-sided), `knearneigh(longlat = TRUE)` for k nearest centroids,
 * and `poly2nb(queen = TRUE)` on the invented demo city's outlines for queen contiguity.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { centroidLonLat, classifySpot, giStar, knnNeighbours, moranI, neighbours } from '../../workers/core/hotspot/index.js';
import { parseDistricts } from '../../workers/core/districts/index.js';
import type { District } from '../../workers/core/districts/types.js';
import { districtCollection } from '../../demo-data/city.js';
import { mulberry32 } from '../../workers/core/prng.js';
import { rPackagesAvailable } from '../support/services.js';

const HAVE_SPDEP = await rPackagesAvailable(['spdep', 'jsonlite', 'sf'], 'hotspot-stats against R spdep');

const dir = mkdtempSync(join(tmpdir(), 'heatledger-hotspot-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** A square district of side `size` degrees with its lower-left corner at (lon, lat). */
function square(id: string, lon: number, lat: number, size = 0.01): District {
  const ring = [[lon, lat], [lon + size, lat], [lon + size, lat + size], [lon, lat + size], [lon, lat]];
  return { id, name: id, geometry: [[ring]], properties: {}, areaSquareMetres: 0 };
}

const rand = mulberry32(424242);
// A 6 × 5 grid of squares (queen neighbours: up to 8), random values with a warm corner.
const GRID: District[] = [];
for (let r = 0; r < 5; r++) for (let c = 0; c < 6; c++) GRID.push(square(`G${r}${c}`, 10 + c * 0.01, 45 + r * 0.01));
const GRID_X = GRID.map((_, i) => 300 + (i % 6) * 0.3 + Math.floor(i / 6) * 0.2 + rand() * 1.5);
// The same grid plus one island far away.
const ISLAND = [...GRID, square('ISL', 10.5, 45.5)];
const ISLAND_X = [...GRID_X, 303.1];
// Scattered small squares for k nearest centroids.
const SCATTER: District[] = Array.from({ length: 25 }, (_, i) => square(`S${i}`, 10 + rand() * 0.5, 45 + rand() * 0.4, 0.002));
const SCATTER_X = SCATTER.map(() => 290 + rand() * 10);
const CHAIN_NB = [[1], [0, 2], [1, 3], [2, 4], [3]];
const CHAIN_X = [10, 12, 20, 22, 11];

const city = districtCollection();
const cityPath = join(dir, 'city.geojson');
writeFileSync(cityPath, JSON.stringify(city));
const CITY = parseDistricts(JSON.stringify(city), cityPath, { idField: 'id', nameField: 'name' });

const CASES = {
  chain: { x: CHAIN_X, nb: CHAIN_NB },
  grid: { x: GRID_X, nb: neighbours(GRID, { kind: 'queen' }) },
  island: { x: ISLAND_X, nb: neighbours(ISLAND, { kind: 'queen' }) },
  knn: { x: SCATTER_X, nb: knnNeighbours(SCATTER.map(centroidLonLat), 4) },
};

const R_SCRIPT = String.raw`
suppressMessages({library(spdep); library(jsonlite); library(sf)})
req <- fromJSON(file("stdin"), simplifyVector = FALSE)
to_nb <- function(lists) {
  nb <- lapply(lists, function(l) if (length(l) == 0) 0L else sort(as.integer(unlist(l)) + 1L))
  class(nb) <- "nb"; attr(nb, "region.id") <- as.character(seq_along(nb)); attr(nb, "sym") <- is.symmetric.nb(nb, verbose = FALSE, force = TRUE)
  nb
}
out <- list()
for (name in names(req$cases)) {
  cs <- req$cases[[name]]
  x <- as.numeric(unlist(cs$x)); nb <- to_nb(cs$nb)
  g <- as.numeric(localG(x, nb2listw(include.self(nb), style = "B", zero.policy = TRUE), zero.policy = TRUE))
  lw <- nb2listw(nb, style = "W", zero.policy = TRUE)
  mr <- moran.test(x, lw, randomisation = TRUE, zero.policy = TRUE, alternative = "two.sided")
  mn <- moran.test(x, lw, randomisation = FALSE, zero.policy = TRUE, alternative = "two.sided")
  out[[name]] <- list(gi = g,
    moran_r = c(unname(mr$estimate), unname(mr$statistic), mr$p.value),
    moran_n = c(unname(mn$estimate), unname(mn$statistic), mn$p.value))
}
coords <- do.call(rbind, lapply(req$centroids, function(p) as.numeric(unlist(p))))
kn <- knearneigh(coords, k = 4, longlat = TRUE)$nn
out$knn_lists <- lapply(seq_len(nrow(kn)), function(i) sort(kn[i, ]) - 1L)
polys <- st_read(req$city, quiet = TRUE)
q <- poly2nb(polys, queen = TRUE, snap = 1e-5)
out$queen <- lapply(seq_along(q), function(i) if (identical(q[[i]], 0L)) integer(0) else sort(q[[i]]) - 1L)
cat(toJSON(out, digits = NA, auto_unbox = FALSE))
`;

interface RCase { gi: number[]; moran_r: number[]; moran_n: number[] }
let ref: Record<string, RCase> & { knn_lists: number[][]; queen: number[][] };

beforeAll(() => {
  if (!HAVE_SPDEP) return;
  const r = spawnSync('Rscript', ['-e', R_SCRIPT], {
    input: JSON.stringify({ cases: CASES, centroids: SCATTER.map(centroidLonLat), city: cityPath }),
    encoding: 'utf8',
    maxBuffer: 16 << 20,
  });
  if (r.status !== 0) throw new Error(`spdep reference script failed: ${r.stderr}`);
  ref = JSON.parse(r.stdout);
}, 120_000);

describe('worked example: a chain of five districts (binary contiguity)', () => {
  it('Gi* with self weight 1', () => {
    // Derived from Ord & Getis 1995 eq. 14 by hand: x̄ = 15, s = √(1249/5 − 225) = 4.980 (population SD);
    // district 3: (12 + 20 + 22 − 3·15) / (s·√((5·3 − 3²)/4)) = 9 / (4.980·1.2247) = 1.4756.
    const { z } = giStar(CHAIN_X, CHAIN_NB);
    const s = Math.sqrt((100 + 144 + 400 + 484 + 121) / 5 - 225);
    const expected = [
      (10 + 12 - 2 * 15) / (s * Math.sqrt((5 * 2 - 4) / 4)),
      (10 + 12 + 20 - 3 * 15) / (s * Math.sqrt((5 * 3 - 9) / 4)),
      (12 + 20 + 22 - 3 * 15) / (s * Math.sqrt((5 * 3 - 9) / 4)),
      (20 + 22 + 11 - 3 * 15) / (s * Math.sqrt((5 * 3 - 9) / 4)),
      (22 + 11 - 2 * 15) / (s * Math.sqrt((5 * 2 - 4) / 4)),
    ];
    z.forEach((v, i) => expect(v).toBeCloseTo(expected[i], 12));
    expect(z[2]).toBeCloseTo(1.4756, 4);
  });

  it('classes at 90/95/99 % (common practice, no source)', () => {
    expect(classifySpot(2.7, 0.0069)).toEqual({ spot: 'hot', confidence: 99 });
    expect(classifySpot(-2.0, 0.0455)).toEqual({ spot: 'cold', confidence: 95 });
    expect(classifySpot(1.7, 0.0891)).toEqual({ spot: 'hot', confidence: 90 });
    expect(classifySpot(1.5, 0.1336)).toEqual({ spot: 'none', confidence: null });
    expect(classifySpot(null, null)).toEqual({ spot: 'none', confidence: null });
  });
});

describe('edge cases', () => {
  it('a district without neighbours keeps a Gi* (itself against the mean) and is left out of n for Moran', () => {
    const nb = neighbours(ISLAND, { kind: 'queen' });
    expect(nb[nb.length - 1]).toEqual([]);
    const { z } = giStar(ISLAND_X, nb);
    expect(z[z.length - 1]).not.toBeNull();
    expect(moranI(ISLAND_X, nb)!.islands).toBe(1);
    // knn never leaves one alone
    expect(neighbours(ISLAND, { kind: 'knn', k: 2 }).every((l) => l.length === 2)).toBe(true);
  });

  it('two districts only: Gi* undefined (null), Moran undefined (null)', () => {
    const two = [square('A', 0, 0), square('B', 0.01, 0)];
    const nb = neighbours(two, { kind: 'queen' });
    expect(nb).toEqual([[1], [0]]);
    expect(giStar([1, 2], nb).z).toEqual([null, null]);
    expect(moranI([1, 2], nb)).toBeNull();
  });

  it('queen counts a shared corner, and a gap within the tolerance (slivers)', () => {
    const corner = [square('A', 0, 0), square('B', 0.01, 0.01)];
    expect(neighbours(corner, { kind: 'queen' })).toEqual([[1], [0]]);
    const gap = [square('A', 0, 0), square('B', 0.01 + 0.5 / 111_320, 0)]; // 0.5 m apart
    expect(neighbours(gap, { kind: 'queen', toleranceMetres: 1 })).toEqual([[1], [0]]);
    expect(neighbours(gap, { kind: 'queen', toleranceMetres: 0.1 })).toEqual([[], []]);
  });

  it('knn refuses k outside 1..n−1 with a clear message', () => {
    expect(() => neighbours(GRID.slice(0, 3), { kind: 'knn', k: 3 })).toThrow(/--k must be an integer from 1 to 2/);
  });
});

if (!HAVE_SPDEP) {
  console.log('hotspot-stats: spdep comparisons not run: Rscript with spdep, sf and jsonlite (r-cran-spdep) is missing');
} else {
  describe('against R spdep (reference library)', () => {
    for (const name of Object.keys(CASES) as (keyof typeof CASES)[]) {
      it(`${name}: Gi* equals localG on include.self neighbours, binary weights`, () => {
        const { z } = giStar(CASES[name].x, CASES[name].nb);
        ref[name].gi.forEach((v, i) => expect(z[i]).toBeCloseTo(v, 10));
      });
      it(`${name}: Moran's I, E[I], variance, z, p equal moran.test (row-standardised; randomisation and normality)`, () => {
        const m = moranI(CASES[name].x, CASES[name].nb)!;
        const [iR, eR, vR, zR, pR] = ref[name].moran_r;
        const [, , vN, zN, pN] = ref[name].moran_n;
        expect(m.i).toBeCloseTo(iR, 12);
        expect(m.expected).toBeCloseTo(eR, 12);
        expect(m.variance_randomisation).toBeCloseTo(vR, 12);
        expect(m.z_randomisation).toBeCloseTo(zR, 10);
        expect(m.p_randomisation).toBeCloseTo(pR, 10);
        expect(m.variance_normal).toBeCloseTo(vN, 12);
        expect(m.z_normal).toBeCloseTo(zN, 10);
        expect(m.p_normal).toBeCloseTo(pN, 10);
      });
    }
    it('k nearest centroids equal knearneigh(longlat = TRUE)', () => {
      expect(CASES.knn.nb).toEqual(ref.knn_lists);
    });
    it('queen neighbours of the demo city equal poly2nb(queen = TRUE)', () => {
      expect(neighbours(CITY, { kind: 'queen' })).toEqual(ref.queen);
    });
  });
}
