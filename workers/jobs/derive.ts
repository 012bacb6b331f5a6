/**
 * derive: pair day and night passes, attach albedo, and compute ATI and SUHI
 * for every district of the run, over the whole stored archive (so a re-run
 * or an added scene gives the same rows as one run over everything).
 */
import { deriveMetrics, type DeriveOptions, type SceneInfo, type StatInfo } from '../core/derive/metrics.js';
import type { JobContext } from '../queue/types.js';
import type { PipelineRepo } from '../store/pipeline-repo.js';

export interface DeriveData {
  runId: number;
  /** District ids (without the rural reference). */
  districtIds: string[];
  ruralId: string;
  options: DeriveOptions;
  /** Albedo property per district (the last fallback), or null. */
  albedoProperties: Record<string, number | null>;
}

export interface DeriveResult {
  rows: number;
  ok: number;
  scenes: { processed: number; failed: number };
}

export async function derive(data: DeriveData, ctx: JobContext<PipelineRepo>): Promise<DeriveResult> {
  const { repo } = ctx;
  // thermal (Level-1 DN) scenes were turned into LST by the zonal step: they are LST passes here
  const processed = await repo.listSceneTimes(['lst', 'thermal', 'albedo'], 'processed');
  const ofKind = (kind: string) => processed.filter((s) => s.kind === kind);
  const lst = [...ofKind('lst'), ...ofKind('thermal')];
  const albedo = ofKind('albedo');
  const dated = albedo.filter((s) => s.acquiredAt !== null);
  const archiveWide = albedo.filter((s) => s.acquiredAt === null);
  const scenes: SceneInfo[] = [
    ...lst.filter((s) => s.acquiredAt && s.pass).map((s) => ({ id: s.id, acquiredAt: s.acquiredAt!, kind: 'lst' as const, pass: s.pass })),
    ...dated.map((s) => ({ id: s.id, acquiredAt: s.acquiredAt!, kind: 'albedo' as const, pass: null })),
  ];
  const ids = [...scenes.map((s) => s.id), ...archiveWide.map((s) => s.id)];
  const stats: StatInfo[] = (await repo.zonalMeansForScenes(ids, [...data.districtIds, data.ruralId]))
    .map((z) => ({ sceneId: z.sceneId, districtId: z.districtId, mean: z.meanKelvin, validFraction: z.validFraction }));

  // one albedo raster for the whole archive (no acquisition time): the newest such scene
  let archiveAlbedo: Map<string, { sceneId: number; mean: number | null; validFraction: number | null }> | undefined;
  if (archiveWide.length) {
    const chosen = archiveWide[archiveWide.length - 1].id;
    archiveAlbedo = new Map(stats.filter((s) => s.sceneId === chosen).map((s) => [s.districtId, { sceneId: chosen, mean: s.mean, validFraction: s.validFraction }]));
  }

  const rows = deriveMetrics({
    scenes,
    stats,
    ruralId: data.ruralId,
    districts: [
      ...data.districtIds.map((id) => ({ id, albedoProperty: data.albedoProperties[id] ?? null })),
      { id: data.ruralId, albedoProperty: null },
    ],
    archiveAlbedo,
    options: data.options,
  });
  await repo.replaceDerivedFor([...data.districtIds, data.ruralId], rows.map((r) => ({
    ...r,
    status: r.status === 'ok' ? 'ok' : 'partial',
    reason: r.status === 'ok' ? null : r.status,
    runId: data.runId,
  })));
  const failed = await repo.countScenes('failed');
  return { rows: rows.length, ok: rows.filter((r) => r.status === 'ok').length, scenes: { processed: lst.length + albedo.length, failed } };
}
