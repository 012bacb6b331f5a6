/**
 * Decoder registry keyed by TIFF compression code. The reader never switches
 * on compression itself: it asks here, and a caller may register another.
 */
import { deflateDecode } from './deflate.js';

export { CorruptBlockError } from './errors.js';

/** Decompress one block to at most `maxBytes` bytes. */
export type BlockDecoder = (input: Uint8Array, maxBytes: number) => Uint8Array | Promise<Uint8Array>;

interface Entry { readonly name: string; readonly decode: BlockDecoder }

/**
 * A decoder whose module loads on its first block, not when a raster is
 * opened: the ZSTD decoder carries an inlined WebAssembly module (~90 kB of
 * source), and LZW and PackBits are rare in LST archives.
 */
function onDemand(load: () => Promise<BlockDecoder>): BlockDecoder {
  let loaded: Promise<BlockDecoder> | null = null;
  return async (input, maxBytes) => {
    loaded ??= load();
    return (await loaded)(input, maxBytes);
  };
}

const registry = new Map<number, Entry>([
  [1, { name: 'none', decode: (input) => input }],
  [5, { name: 'LZW', decode: onDemand(() => import('./lzw.js').then((m) => m.lzwDecode)) }],
  [8, { name: 'DEFLATE', decode: deflateDecode }],
  [32946, { name: 'DEFLATE', decode: deflateDecode }],
  [32773, { name: 'PackBits', decode: onDemand(() => import('./packbits.js').then((m) => m.packbitsDecode)) }],
  [50000, { name: 'ZSTD', decode: onDemand(() => import('./zstd.js').then((m) => m.zstdDecode)) }],
  [34887, { name: 'LERC', decode: onDemand(() => import('./lerc.js').then((m) => m.lercDecode)) }],
]);

/**
 * Well-known names of codes we do not decode, for a clear error message.
 * JPEG and WebP are lossy image codecs that change the values of a
 * temperature band beyond any stated bound, and WebP decoding in the geotiff
 * package needs a browser's image decoder; both are refused.
 */
const KNOWN_NAMES: Record<number, string> = {
  2: 'CCITT RLE', 3: 'CCITT Group 3', 4: 'CCITT Group 4', 6: 'old-style JPEG', 7: 'JPEG',
  34712: 'JPEG 2000', 34887: 'LERC', 34925: 'LZMA', 50001: 'WebP', 50002: 'JPEG XL',
};

/**
 * Register (or replace) the decoder for a TIFF compression code.
 * @example registerDecoder(34925, 'LZMA', myLzmaDecoder)
 */
export function registerDecoder(code: number, name: string, decode: BlockDecoder): void {
  registry.set(code, { name, decode });
}

/** The decoder for a compression code, or null when none is registered. */
export function decoderFor(code: number): BlockDecoder | null {
  return registry.get(code)?.decode ?? null;
}

/** Why a well-known code is refused, for the error message. */
const REFUSED_BECAUSE: Record<number, string> = {
  6: 'JPEG is a lossy 8-bit image codec that alters temperature values beyond any stated bound',
  7: 'JPEG is a lossy 8-bit image codec that alters temperature values beyond any stated bound',
  50001: 'WebP decoding needs a web browser\'s image decoder, which a server does not have',
};

/**
 * The full "not supported" sentence for a compression code without a decoder,
 * with the reason and the way out where one is known.
 * @example unsupportedCompression(7) // 'compression JPEG (7) is not supported: JPEG is a lossy ...; re-encode ...'
 */
export function unsupportedCompression(code: number): string {
  const why = REFUSED_BECAUSE[code];
  const base = `compression ${compressionName(code)} is not supported`;
  return why ? `${base}: ${why}; re-encode the scene with DEFLATE, LZW, ZSTD or LERC` : base;
}

/** Human-readable name of a compression code, e.g. "LZW (5)". */
export function compressionName(code: number): string {
  const name = registry.get(code)?.name ?? KNOWN_NAMES[code] ?? 'unknown';
  return `${name} (${code})`;
}
