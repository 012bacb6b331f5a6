/**
 * Pieces the archive bench's figures rest on: the scale-out model's
 * arithmetic, the /proc reading of CPU time, the flag splitting and the rural
 * ring it hands to both sides.
 */
import * as turf from '@turf/turf';
import { describe, expect, it } from 'vitest';
import { archiveFlags } from './archive.js';
import { DISTRICT_CELL_METRES, DISTRICT_COLS, DISTRICT_ROWS, ruralRingCollection } from './pipeline-data.js';
import { procTimes } from './proc-cpu.js';
import { amdahl, fitScaleModel, workersToReach } from './scale-model.js';

describe('scale model', () => {
  it('follows Amdahl\'s law', () => {
    // derived from X(N) = lambda N / (1 + sigma (N - 1)) (Amdahl 1967; Gunther 2007, USL with kappa = 0):
    // sigma 0.05, N = 64: 64 / (1 + 3.15) = 15.4217
    expect(amdahl(1, 0.05, 64)).toBeCloseTo(64 / 4.15, 10);
    expect(amdahl(10, 0, 8)).toBe(80);
    // the inverse: the N at which the curve reaches x gives x back
    const n = workersToReach(10, 0.05, 100)!;
    expect(amdahl(10, 0.05, n)).toBeCloseTo(100, 9);
    // an asymptote lambda / sigma = 200 below x: never reached
    expect(workersToReach(10, 0.05, 250)).toBeNull();
  });

  it('fits sigma from 1 and 2 workers and caps the curve at the first ceiling', () => {
    // X(1) = 10, X(2) = 19: sigma = 2 * 10 / 19 - 1 = 0.052632
    const m = fitScaleModel({ x1: 10, x2: 19, postgresCpuPerScene: 0.01, redisCpuPerScene: 0.002, cliCpuPerScene: 0.001, workerCpuPerScene: 0.09, postgresCores: 1 }, [1, 2, 64]);
    expect(m.fit).toBe('throughput');
    expect(m.sigma).toBeCloseTo(20 / 19 - 1, 12);
    expect(m.predictions[1].predicted).toBeCloseTo(19, 9);
    // ceilings c / D: PostgreSQL 1 / 0.01 = 100, Redis 500, ingest command 1000; 64 workers would give 10*64/(1+0.0526*63) = 148
    expect(m.bottleneck?.name).toBe('PostgreSQL');
    expect(m.predictions[2]).toMatchObject({ predicted: 100, boundBy: 'PostgreSQL' });
    // beside it, the demand bound: lambda = 1 / 0.09 s per scene, no contention, the same ceilings
    expect(m.demandPredictions!.map((p) => p.predicted)).toEqual([1 / 0.09, 2 / 0.09, 100]);
  });

  it('falls back to the service demands when two workers were no faster than one', () => {
    const m = fitScaleModel({ x1: 10, x2: 9, postgresCpuPerScene: 0.001, redisCpuPerScene: 0.001, cliCpuPerScene: 0.005, workerCpuPerScene: 0.04, postgresCores: 4 }, [1, 4, 8]);
    expect(m.fit).toBe('demand');
    expect(m.fallbackReason).toContain('sigma');
    // lambda = 1 / 0.04 = 25 per worker, no contention; the ingest command caps at 1 / 0.005 = 200, reached at N = 8
    expect(m.lambda).toBeCloseTo(25, 12);
    expect(m.predictions.map((p) => p.predicted)).toEqual([25, 100, 200]);
    expect(m.bottleneck).toMatchObject({ name: 'ingest command' });
    expect(m.bottleneck!.saturatesAtWorkers).toBeCloseTo(8, 9);
  });
});

describe('CPU time from /proc', () => {
  it('reads this process\'s own time, which grows with work done', () => {
    const before = procTimes(process.pid)!;
    // cross-check against the kernel's other report of the same figure (getrusage through process.cpuUsage; proc(5))
    const u = process.cpuUsage();
    expect(Math.abs(before.self - (u.user + u.system) / 1e6)).toBeLessThan(0.05);
    let x = 0;
    const until = process.cpuUsage().user + 200_000;
    while (process.cpuUsage().user < until) x += Math.sqrt(x + 1);
    expect(x).toBeGreaterThan(0);
    expect(procTimes(process.pid)!.self - before.self).toBeGreaterThanOrEqual(0.15);
    expect(procTimes(2 ** 22 + 12345)).toBeNull();
  });
});

describe('archive flags and rural ring', () => {
  it('splits the section\'s flags off', () => {
    expect(archiveFlags(['--json', '--archive', '--archive-reps', '3', '--archive-configs', 'peer,embedded'])).toEqual({
      argv: ['--json'], archive: true, options: { repetitions: 3, configs: ['peer', 'embedded'] },
    });
    expect(() => archiveFlags(['--archive-configs', 'cloud'])).toThrow(/archive-configs/);
  });

  it('is a ring 2-6 km outside the districts with RFC 7946 winding', () => {
    const ring = ruralRingCollection() as GeoJSON.FeatureCollection<GeoJSON.Polygon>;
    const poly = ring.features[0];
    // outer ring counter-clockwise, hole clockwise (RFC 7946 section 3.1.6), checked with turf
    expect(turf.booleanClockwise(poly.geometry.coordinates[0])).toBe(false);
    expect(turf.booleanClockwise(poly.geometry.coordinates[1])).toBe(true);
    // area of a square annulus: (W + 12 km)(H + 12 km) - (W + 4 km)(H + 4 km), W = 5 x 2.4 km, H = 4 x 2.4 km;
    // within 1 % on the ellipsoid-free turf area (UTM scale near the centre meridian is ~0.9996)
    const w = DISTRICT_COLS * DISTRICT_CELL_METRES, h = DISTRICT_ROWS * DISTRICT_CELL_METRES;
    const expected = (w + 12_000) * (h + 12_000) - (w + 4_000) * (h + 4_000);
    expect(Math.abs(turf.area(poly) / expected - 1)).toBeLessThan(0.01);
  });
});
