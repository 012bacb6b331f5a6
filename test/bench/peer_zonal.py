#!/usr/bin/python3
"""Benchmark peer: district statistics of one LST raster with rasterio + NumPy,
done the way a careful user would write it.

    /usr/bin/python3 test/bench/peer_zonal.py RASTER DISTRICTS.geojson [--timings]

For each district: reproject the lon/lat polygon to the raster CRS, read only
the window under its bounds (rounded out, intersected with the raster), mask
by the pixel-centre rule (rasterio.features.geometry_mask, all_touched=False),
drop nodata, apply scale/offset, drop values outside [170, 360] K and print
one JSON row per district with the fields of the zonal JSON output.
--timings prints seconds per phase to stderr.
"""
import json
import math
import sys
import time

T_START = time.perf_counter()
import numpy as np  # noqa: E402
import rasterio  # noqa: E402
import rasterio.features  # noqa: E402
import rasterio.warp  # noqa: E402
import rasterio.windows  # noqa: E402
from rasterio.windows import Window  # noqa: E402

T_IMPORTED = time.perf_counter()

PLAUSIBLE_KELVIN = (170.0, 360.0)  # the zonal default (PLAUSIBLE_RANGE_KELVIN in workers/core/defaults.ts)


def stats(values, pixels):
    """Row fields for the valid Kelvin values of a district with `pixels` cells."""
    n = int(values.size)
    if pixels == 0:
        return dict(pixels=0, valid=0, valid_fraction=None, mean=None, std=None,
                    min=None, max=None, median=None, p10=None, p90=None)
    if n == 0:
        return dict(pixels=pixels, valid=0, valid_fraction=0.0, mean=None, std=None,
                    min=None, max=None, median=None, p10=None, p90=None)
    p10, median, p90 = np.percentile(values, [10, 50, 90])  # NumPy default: linear (Hyndman & Fan type 7)
    return dict(pixels=pixels, valid=n, valid_fraction=n / pixels,
                mean=float(values.mean()), std=float(values.std()),  # ddof 0
                min=float(values.min()), max=float(values.max()),
                median=float(median), p10=float(p10), p90=float(p90))


def main(argv):
    args = [a for a in argv if not a.startswith('--')]
    timings = '--timings' in argv
    if len(args) != 2:
        sys.stderr.write('usage: peer_zonal.py RASTER DISTRICTS.geojson [--timings]\n')
        return 2
    raster_path, districts_path = args
    phase = {'import': T_IMPORTED - T_START, 'reproject': 0.0, 'read': 0.0, 'mask': 0.0, 'stats': 0.0}
    t = time.perf_counter()
    with open(districts_path, encoding='utf-8') as f:
        features = json.load(f)['features']
    phase['geojson'] = time.perf_counter() - t
    rows = []
    t = time.perf_counter()
    with rasterio.open(raster_path) as src:
        phase['open'] = time.perf_counter() - t
        scale = src.scales[0]
        offset = src.offsets[0]
        nodata = src.nodata
        full = Window(0, 0, src.width, src.height)
        for feat in features:
            t = time.perf_counter()
            geom = rasterio.warp.transform_geom('EPSG:4326', src.crs, feat['geometry'])
            xs = [p[0] for ring in geom['coordinates'] for p in ring]
            ys = [p[1] for ring in geom['coordinates'] for p in ring]
            win = rasterio.windows.from_bounds(min(xs), min(ys), max(xs), max(ys), transform=src.transform)
            c0, r0 = math.floor(win.col_off), math.floor(win.row_off)
            c1, r1 = math.ceil(win.col_off + win.width), math.ceil(win.row_off + win.height)
            phase['reproject'] += time.perf_counter() - t
            try:
                win = rasterio.windows.intersection(Window(c0, r0, c1 - c0, r1 - r0), full)
            except rasterio.errors.WindowError:
                win = None
            if win is None or win.width <= 0 or win.height <= 0:
                rows.append(dict(district=str(feat['properties']['id']), **stats(np.empty(0), 0)))
                continue
            t = time.perf_counter()
            data = src.read(1, window=win)
            phase['read'] += time.perf_counter() - t
            t = time.perf_counter()
            inside = rasterio.features.geometry_mask([geom], out_shape=data.shape,
                                                     transform=src.window_transform(win),
                                                     all_touched=False, invert=True)
            phase['mask'] += time.perf_counter() - t
            t = time.perf_counter()
            dn = data[inside]
            pixels = int(dn.size)
            if nodata is not None:
                dn = dn[dn != nodata]
            kelvin = dn.astype(np.float64) * scale + offset
            kelvin = kelvin[(kelvin >= PLAUSIBLE_KELVIN[0]) & (kelvin <= PLAUSIBLE_KELVIN[1])]
            rows.append(dict(district=str(feat['properties']['id']), **stats(kelvin, pixels)))
            phase['stats'] += time.perf_counter() - t
    t = time.perf_counter()
    sys.stdout.write(json.dumps(rows, indent=2) + '\n')
    phase['output'] = time.perf_counter() - t
    if timings:
        phase['total_in_script'] = time.perf_counter() - T_START
        sys.stderr.write(json.dumps(phase) + '\n')
    return 0


if __name__ == '__main__':
    sys.exit(main(sys.argv[1:]))
