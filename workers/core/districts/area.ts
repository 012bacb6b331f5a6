/**
 * Area of lon/lat polygons on the WGS 84 ellipsoid.
 *
 * RFC 7946 (section 3.1.1) makes an edge a straight line in lon/lat, so the
 * region is bounded by curves with latitude linear in longitude along each edge.
 * By Green's theorem the area of a counter-clockwise ring is
 *     A = -∮ S(φ) dλ,   S(φ) = (a² / 2) q(φ),
 * where S(φ) is the ellipsoidal area from the equator to latitude φ per radian of
 * longitude and q is the authalic function (Snyder 1987, "Map Projections - A
 * Working Manual", USGS PP 1395, eq. 3-12):
 *     q(φ) = (1 - e²) [ sin φ / (1 - e² sin² φ) - 1/(2e) ln((1 - e sin φ) / (1 + e sin φ)) ].
 * The edge integral is done with 5-point Gauss-Legendre quadrature (exact for
 * edges along a parallel, ~1e-12 relative otherwise for district-sized edges).
 * Edges must not cross the antimeridian (RFC 7946 asks for such geometries to be cut).
 */
import type { SquareMetres } from '../units.js';

const A = 6378137; // WGS 84 semi-major axis, metres (NIMA TR8350.2)
const F = 1 / 298.257223563; // WGS 84 flattening
const E2 = F * (2 - F);
const E = Math.sqrt(E2);
const DEG = Math.PI / 180;

function q(phi: number): number {
  const s = Math.sin(phi);
  return (1 - E2) * (s / (1 - E2 * s * s) - (1 / (2 * E)) * Math.log((1 - E * s) / (1 + E * s)));
}

// Gauss-Legendre nodes and weights on [0, 1] (Abramowitz & Stegun 1964, table 25.4, n = 5)
const GL_X = [0.0469100770306680, 0.2307653449471585, 0.5, 0.7692346550528415, 0.9530899229693320];
const GL_W = [0.1184634425280945, 0.2393143352496832, 0.2844444444444444, 0.2393143352496832, 0.1184634425280945];

/**
 * Signed area of one ring in square metres: positive when counter-clockwise.
 * @param ring closed ring of [lon, lat] degrees
 */
export function signedRingAreaSquareMetres(ring: readonly (readonly number[])[]): number {
  let sum = 0;
  for (let i = 0; i + 1 < ring.length; i++) {
    const l0 = ring[i][0] * DEG, p0 = ring[i][1] * DEG;
    const l1 = ring[i + 1][0] * DEG, p1 = ring[i + 1][1] * DEG;
    const dl = l1 - l0;
    if (dl === 0) continue;
    let integral = 0;
    if (p0 === p1) integral = q(p0);
    else for (let k = 0; k < 5; k++) integral += GL_W[k] * q(p0 + GL_X[k] * (p1 - p0));
    sum += integral * dl;
  }
  return -(A * A / 2) * sum;
}

/**
 * Area of MultiPolygon coordinates (lon/lat WGS 84) in square metres: outer
 * rings minus holes, whatever their winding.
 * @example ellipsoidalAreaSquareMetres([[[[0,0],[1,0],[1,1],[0,1],[0,0]]]]) // ≈ 1.2308e10
 */
export function ellipsoidalAreaSquareMetres(geometry: readonly (readonly (readonly (readonly number[])[])[])[]): SquareMetres {
  let total = 0;
  for (const polygon of geometry) {
    polygon.forEach((ring, r) => {
      const a = Math.abs(signedRingAreaSquareMetres(ring));
      total += r === 0 ? a : -a;
    });
  }
  return total;
}

/** Planar signed area (shoelace formula; common practice, no source) in squared coordinate units; positive = counter-clockwise. */
export function planarSignedArea(ring: readonly (readonly number[])[]): number {
  let s = 0;
  for (let i = 0; i + 1 < ring.length; i++) s += ring[i][0] * ring[i + 1][1] - ring[i + 1][0] * ring[i][1];
  return s / 2;
}
