#!/usr/bin/python3
"""Benchmark peer: a whole LST archive into PostgreSQL with rasterio + NumPy +
psycopg2 (Debian's packages), written the way a careful user would.

    /usr/bin/python3 test/bench/peer_archive.py ARCHIVE_DIR DISTRICTS.geojson RURAL.geojson DATABASE_URL [--timings]

For every *.tif under ARCHIVE_DIR (sorted):
- read the acquisition time (GDAL metadata ACQUISITION_TIME) and the pass:
  day when the sun is above the horizon at the scene centre (NOAA solar
  position, the low-accuracy equations of Spencer 1971 for declination and
  the equation of time, as printed in NOAA's "General Solar Position
  Calculations"; from memory);
- compute the district masks once per grid (CRS, transform, size) and reuse
  them: each district and the rural reference reprojected to the raster CRS,
  its window, and rasterio.features.geometry_mask (pixel-centre rule,
  all_touched=False);
- read the window covering every target once, apply nodata, scale/offset and
  the plausible range [170, 360] K, and compute pixels, valid, valid_fraction,
  mean, std (ddof 0), min, max and the type-7 median, p10 and p90
  (np.percentile's default) per target.
Then pair each day pass with the night pass nearest in time within 18 h (a
tie to the earlier one), and derive per district and day: T_day, T_night
(a pass counts when its valid fraction is at least 0.5), SUHI day and night
(district minus rural mean of the same scene) and ATI = (1 - albedo) /
(T_day - T_night) with the district's albedo property (Price 1977; undefined
when the difference is at most 0.5 K).
Rows go to three fresh tables (peer_scenes, peer_zonal, peer_derived) with
one COPY per table through psycopg2's copy_expert, in one transaction.
Prints one JSON line: scenes, zonal and derived row counts; --timings adds
seconds per phase.
"""
import datetime as dt
import glob
import io
import json
import math
import os
import sys
import time

T_START = time.perf_counter()
import numpy as np  # noqa: E402
import psycopg2  # noqa: E402
import rasterio  # noqa: E402
import rasterio.features  # noqa: E402
import rasterio.warp  # noqa: E402
import rasterio.windows  # noqa: E402
from rasterio.windows import Window  # noqa: E402

T_IMPORTED = time.perf_counter()

PLAUSIBLE_KELVIN = (170.0, 360.0)   # PLAUSIBLE_RANGE_KELVIN in workers/core/defaults.ts
MIN_VALID_FRACTION = 0.5            # MIN_VALID_FRACTION
PAIRING_WINDOW_HOURS = 18.0         # PAIRING_WINDOW_HOURS
ATI_MIN_DIFFERENCE_KELVIN = 0.5     # ATI_MIN_DIFFERENCE_KELVIN
RURAL_ID = 'rural'

SCHEMA = """
CREATE TABLE peer_scenes (id integer PRIMARY KEY, path text NOT NULL, acquired_at timestamptz NOT NULL,
  pass text NOT NULL, sun_elevation_deg double precision NOT NULL);
CREATE TABLE peer_zonal (scene_id integer NOT NULL REFERENCES peer_scenes (id), district_id text NOT NULL,
  pixels integer NOT NULL, valid integer NOT NULL, valid_fraction double precision, mean_k double precision,
  std_k double precision, min_k double precision, max_k double precision, median_k double precision,
  p10_k double precision, p90_k double precision, PRIMARY KEY (scene_id, district_id));
CREATE TABLE peer_derived (obs_date date NOT NULL, district_id text NOT NULL, day_scene_id integer NOT NULL,
  night_scene_id integer, t_day_k double precision, t_night_k double precision, ati_per_k double precision,
  suhi_day_k double precision, suhi_night_k double precision, PRIMARY KEY (obs_date, district_id));
"""


def sun_elevation_deg(when, lon, lat):
    """Solar elevation, degrees (NOAA General Solar Position Calculations; from memory)."""
    doy = when.timetuple().tm_yday
    hour = when.hour + when.minute / 60 + when.second / 3600
    g = 2 * math.pi / 365 * (doy - 1 + (hour - 12) / 24)
    eqtime = 229.18 * (0.000075 + 0.001868 * math.cos(g) - 0.032077 * math.sin(g)
                       - 0.014615 * math.cos(2 * g) - 0.040849 * math.sin(2 * g))
    decl = (0.006918 - 0.399912 * math.cos(g) + 0.070257 * math.sin(g) - 0.006758 * math.cos(2 * g)
            + 0.000907 * math.sin(2 * g) - 0.002697 * math.cos(3 * g) + 0.00148 * math.sin(3 * g))
    true_solar_minutes = hour * 60 + eqtime + 4 * lon
    ha = math.radians(true_solar_minutes / 4 - 180)
    phi = math.radians(lat)
    cos_zenith = math.sin(phi) * math.sin(decl) + math.cos(phi) * math.cos(decl) * math.cos(ha)
    return 90 - math.degrees(math.acos(max(-1.0, min(1.0, cos_zenith))))


def stats(values, pixels):
    """pixels, valid, valid_fraction, mean, std, min, max, median, p10, p90 of the valid Kelvin values."""
    n = int(values.size)
    if pixels == 0:
        return (0, 0, None, None, None, None, None, None, None, None)
    if n == 0:
        return (pixels, 0, 0.0, None, None, None, None, None, None, None)
    p10, median, p90 = np.percentile(values, [10, 50, 90])  # linear: Hyndman & Fan type 7
    return (pixels, n, n / pixels, float(values.mean()), float(values.std()),
            float(values.min()), float(values.max()), float(median), float(p10), float(p90))


class Grid:
    """Per grid: the window read once and each target's mask inside it."""

    def __init__(self, src, targets):
        full = Window(0, 0, src.width, src.height)
        boxes = []
        geoms = []
        for tid, geometry in targets:
            geom = rasterio.warp.transform_geom('EPSG:4326', src.crs, geometry)
            xs = [p[0] for poly in _polygons(geom) for ring in poly for p in ring]
            ys = [p[1] for poly in _polygons(geom) for ring in poly for p in ring]
            win = rasterio.windows.from_bounds(min(xs), min(ys), max(xs), max(ys), transform=src.transform)
            c0, r0 = math.floor(win.col_off), math.floor(win.row_off)
            c1, r1 = math.ceil(win.col_off + win.width), math.ceil(win.row_off + win.height)
            try:
                w = rasterio.windows.intersection(Window(c0, r0, c1 - c0, r1 - r0), full)
            except rasterio.errors.WindowError:
                w = None
            boxes.append(w)
            geoms.append((tid, geom))
        present = [b for b in boxes if b is not None]
        c0 = min(int(b.col_off) for b in present)
        r0 = min(int(b.row_off) for b in present)
        c1 = max(int(b.col_off + b.width) for b in present)
        r1 = max(int(b.row_off + b.height) for b in present)
        self.window = Window(c0, r0, c1 - c0, r1 - r0)
        self.masks = []  # (id, row slice, col slice, boolean mask) relative to self.window
        for (tid, geom), b in zip(geoms, boxes):
            if b is None:
                self.masks.append((tid, None, None, None))
                continue
            rs = slice(int(b.row_off) - r0, int(b.row_off + b.height) - r0)
            cs = slice(int(b.col_off) - c0, int(b.col_off + b.width) - c0)
            inside = rasterio.features.geometry_mask([geom], out_shape=(int(b.height), int(b.width)),
                                                     transform=src.window_transform(b),
                                                     all_touched=False, invert=True)
            self.masks.append((tid, rs, cs, inside))


def _polygons(geom):
    return geom['coordinates'] if geom['type'] == 'MultiPolygon' else [geom['coordinates']]


def scene_rows(src, grid, scale, offset, nodata):
    data = src.read(1, window=grid.window)
    # Kelvin once for the window; NaN where not valid (nodata or implausible)
    kelvin = data.astype(np.float64) * scale + offset
    invalid = (kelvin < PLAUSIBLE_KELVIN[0]) | (kelvin > PLAUSIBLE_KELVIN[1])
    if nodata is not None:
        invalid |= data == nodata
    kelvin[invalid] = np.nan
    out = []
    for tid, rs, cs, inside in grid.masks:
        if inside is None:
            out.append((tid, stats(np.empty(0), 0)))
            continue
        values = kelvin[rs, cs][inside]
        pixels = int(values.size)
        out.append((tid, stats(values[~np.isnan(values)], pixels)))
    return out


def copy_rows(cur, table, columns, rows):
    buf = io.StringIO()
    for r in rows:
        buf.write('\t'.join('\\N' if v is None else repr(v) if isinstance(v, float) else str(v) for v in r))
        buf.write('\n')
    buf.seek(0)
    cur.copy_expert(f"COPY {table} ({', '.join(columns)}) FROM STDIN", buf)


def pair_nights(days, nights):
    """Each day scene's nearest night scene within the window (ties to the earlier), or None."""
    window = PAIRING_WINDOW_HOURS * 3600
    out = {}
    for d in days:
        best = None
        for n in nights:
            gap = abs((n['acquired_at'] - d['acquired_at']).total_seconds())
            if gap > window:
                continue
            key = (gap, n['acquired_at'])
            if best is None or key < best[0]:
                best = (key, n)
        out[d['id']] = best[1] if best else None
    return out


def main(argv):
    args = [a for a in argv if not a.startswith('--')]
    timings = '--timings' in argv
    if len(args) != 4:
        sys.stderr.write('usage: peer_archive.py ARCHIVE_DIR DISTRICTS.geojson RURAL.geojson DATABASE_URL [--timings]\n')
        return 2
    archive_dir, districts_path, rural_path, database_url = args
    phase = {'import': T_IMPORTED - T_START, 'masks': 0.0, 'scenes': 0.0, 'derive': 0.0, 'store': 0.0}
    with open(districts_path, encoding='utf-8') as f:
        features = json.load(f)['features']
    with open(rural_path, encoding='utf-8') as f:
        rural = json.load(f)
    rural_geometry = rural['features'][0]['geometry'] if rural.get('type') == 'FeatureCollection' else rural
    albedo = {str(f['properties']['id']): f['properties'].get('albedo') for f in features}
    targets = [(str(f['properties']['id']), f['geometry']) for f in features] + [(RURAL_ID, rural_geometry)]

    grids = {}
    scenes = []
    zonal = []
    for sid, path in enumerate(sorted(glob.glob(os.path.join(archive_dir, '**', '*.tif'), recursive=True)), start=1):
        with rasterio.open(path) as src:
            key = (src.crs.to_wkt(), tuple(src.transform), src.width, src.height)
            grid = grids.get(key)
            if grid is None:
                t = time.perf_counter()
                grid = grids[key] = Grid(src, targets)
                phase['masks'] += time.perf_counter() - t
            t = time.perf_counter()
            when = dt.datetime.fromisoformat(src.tags()['ACQUISITION_TIME'].replace('Z', '+00:00'))
            cx, cy = src.xy(src.height / 2, src.width / 2, offset='ul')
            lon, lat = rasterio.warp.transform(src.crs, 'EPSG:4326', [cx], [cy])
            elevation = sun_elevation_deg(when, lon[0], lat[0])
            scenes.append({'id': sid, 'path': path, 'acquired_at': when, 'pass': 'day' if elevation > 0 else 'night',
                           'sun_elevation_deg': elevation})
            for tid, row in scene_rows(src, grid, src.scales[0], src.offsets[0], src.nodata):
                zonal.append((sid, tid) + row)
            phase['scenes'] += time.perf_counter() - t

    t = time.perf_counter()
    by_key = {(r[0], r[1]): r for r in zonal}

    def pass_value(scene_id, tid):
        r = by_key.get((scene_id, tid))
        if r is None or r[4] is None or r[2] is None or r[4] < MIN_VALID_FRACTION:
            return None
        return r[5]

    order = sorted(scenes, key=lambda s: (s['acquired_at'], s['id']))
    days = [s for s in order if s['pass'] == 'day']
    nights = [s for s in order if s['pass'] == 'night']
    pairs = pair_nights(days, nights)
    derived = []
    for d in days:
        n = pairs[d['id']]
        rural_day = pass_value(d['id'], RURAL_ID)
        rural_night = pass_value(n['id'], RURAL_ID) if n else None
        for tid, _ in targets[:-1]:
            t_day = pass_value(d['id'], tid)
            t_night = pass_value(n['id'], tid) if n else None
            suhi_day = t_day - rural_day if t_day is not None and rural_day is not None else None
            suhi_night = t_night - rural_night if t_night is not None and rural_night is not None else None
            ati = None
            a = albedo.get(tid)
            if t_day is not None and t_night is not None and a is not None and t_day - t_night > ATI_MIN_DIFFERENCE_KELVIN:
                ati = (1 - a) / (t_day - t_night)  # Price 1977
            derived.append((d['acquired_at'].date().isoformat(), tid, d['id'], n['id'] if n else None,
                            t_day, t_night, ati, suhi_day, suhi_night))
    phase['derive'] = time.perf_counter() - t

    t = time.perf_counter()
    conn = psycopg2.connect(database_url)
    try:
        with conn, conn.cursor() as cur:
            cur.execute(SCHEMA)
            copy_rows(cur, 'peer_scenes', ['id', 'path', 'acquired_at', 'pass', 'sun_elevation_deg'],
                      [(s['id'], s['path'], s['acquired_at'].isoformat(), s['pass'], s['sun_elevation_deg']) for s in scenes])
            copy_rows(cur, 'peer_zonal', ['scene_id', 'district_id', 'pixels', 'valid', 'valid_fraction', 'mean_k', 'std_k',
                                          'min_k', 'max_k', 'median_k', 'p10_k', 'p90_k'], zonal)
            copy_rows(cur, 'peer_derived', ['obs_date', 'district_id', 'day_scene_id', 'night_scene_id', 't_day_k', 't_night_k',
                                            'ati_per_k', 'suhi_day_k', 'suhi_night_k'], derived)
    finally:
        conn.close()
    phase['store'] = time.perf_counter() - t
    out = {'scenes': len(scenes), 'zonal_rows': len(zonal), 'derived_rows': len(derived), 'grids': len(grids)}
    if timings:
        phase['total_in_script'] = time.perf_counter() - T_START
        out['seconds'] = phase
    sys.stdout.write(json.dumps(out) + '\n')
    return 0


if __name__ == '__main__':
    sys.exit(main(sys.argv[1:]))
