/** Result types of the coverage rules. */
import type { Window } from '../raster/affine.js';

/**
 * Cells whose centre lies inside a polygon, as row-wise column spans.
 *
 * Row `window.rowOff + i` holds the spans `spans[2k], spans[2k + 1]` for
 * `k` in `[rowOffsets[i], rowOffsets[i + 1])`: half-open `[colStart, colEnd)`
 * in ABSOLUTE raster columns, sorted, merged and non-overlapping.
 */
export interface CentreMask {
  /** Tight window around the selected cells, inside the raster. */
  readonly window: Window;
  /** Span-pair index where each window row starts; length window.height + 1. */
  readonly rowOffsets: Uint32Array;
  /** Flat [colStart, colEnd) pairs, absolute columns. */
  readonly spans: Int32Array;
  /** Number of selected cells (0 for a polygon that misses every cell centre). */
  readonly count: number;
}

/**
 * Fraction (0-1) of each cell's area that lies inside a polygon.
 * `fractions[i * window.width + j]` is the cell at row `window.rowOff + i`,
 * column `window.colOff + j`.
 */
export interface FractionMask {
  readonly window: Window;
  readonly fractions: Float32Array;
  /** Sum of the fractions: the polygon's area on the raster in cell units. */
  readonly sum: number;
}
