/** The job tree of a run: derive ← zonal (one per scene) ← ingest, with content-derived job ids. */
import { fingerprint } from '../core/hash.js';
import type { IngestData } from '../jobs/ingest.js';
import type { ThermalZonalData, ZonalData } from '../jobs/zonal.js';
import type { OwnEmissivityInputs } from '../core/thermal/index.js';
import type { DeriveData } from '../jobs/derive.js';
import { deriveJobId } from '../queue/tree.js';
import type { JobSpec } from '../queue/types.js';
import type { ManifestEntry, SceneKind } from './archive.js';

/** Build the job tree: derive ← zonal (one per scene) ← ingest. */
export function buildFlow(args: {
  identity: string;
  runId: number;
  files: { path: string; contentHash: string; kind?: SceneKind; manifest?: ManifestEntry }[];
  targetIds: string[];
  params: Record<string, unknown>;
  zonal: Omit<ZonalData, 'runId' | 'contentHash' | 'path' | 'targetIds' | 'targetsKey' | 'qa'>;
  derive: Omit<DeriveData, 'runId'>;
  qaMaskBits?: number;
  /** Emissivity inputs shared by every thermal scene of the run (each file adds its own manifest inputs). */
  thermal?: Omit<ThermalZonalData, 'own'>;
}): JobSpec {
  const targetsKey = fingerprint(args.targetIds, args.params);
  const children: JobSpec[] = args.files.map((f) => {
    const ingestData: IngestData = { path: f.path, contentHash: f.contentHash, runId: args.runId, manifest: f.manifest, defaultKind: f.kind };
    const qa = f.manifest?.qa && args.qaMaskBits !== undefined ? { path: f.manifest.qa, maskBits: args.qaMaskBits } : undefined;
    const zonalData: ZonalData = { ...args.zonal, runId: args.runId, contentHash: f.contentHash, path: f.path, targetIds: args.targetIds, targetsKey, qa };
    if (args.thermal && mayBeThermal(f.manifest, f.kind)) zonalData.thermal = thermalDataOf(args.thermal, f.manifest);
    return {
      name: 'zonal',
      id: deriveJobId('zonal', args.identity, f.contentHash, targetsKey),
      data: zonalData,
      children: [{ name: 'ingest', id: deriveJobId('ingest', args.identity, f.contentHash, f.manifest ?? null, f.kind ?? null), data: ingestData }],
    };
  });
  return {
    name: 'derive',
    id: deriveJobId('derive', args.identity, targetsKey, children.map((c) => c.id).sort()),
    data: { ...args.derive, runId: args.runId } satisfies DeriveData,
    children,
  };
}

/** A scene's own emissivity inputs from its manifest entry. */
function ownEmissivityInputs(m: ManifestEntry | undefined): OwnEmissivityInputs {
  if (!m) return {};
  const out: OwnEmissivityInputs = {};
  if (m.emissivityRaster) out.emissivityRaster = m.emissivityRaster;
  if (m.emissivity !== undefined) out.emissivity = m.emissivity;
  if (m.ndvi) out.ndvi = m.ndvi;
  if (m.red && m.nir) { out.red = m.red; out.nir = m.nir; }
  return out;
}

/** A scene the manifest (or the command line) gives another kind can never be thermal: its jobs carry no thermal inputs. */
function mayBeThermal(m: ManifestEntry | undefined, kind: SceneKind | undefined): boolean {
  const k = m?.kind ?? kind;
  return k === undefined || k === 'thermal';
}

const DAY_MS = 86_400_000;

/**
 * A scene's thermal inputs: its own manifest inputs and the run's shared ones; when the
 * manifest dates the scene, only the NDVI sources within the window travel with its job.
 */
function thermalDataOf(shared: Omit<ThermalZonalData, 'own'>, m: ManifestEntry | undefined): ThermalZonalData {
  const at = m?.acquiredAt ? Date.parse(m.acquiredAt) : NaN;
  const ndviSources = Number.isNaN(at) ? shared.ndviSources
    : shared.ndviSources.filter((n) => n.acquiredAt !== null && Math.abs(Date.parse(n.acquiredAt) - at) <= shared.windowDays * DAY_MS);
  return { ...shared, ndviSources, own: ownEmissivityInputs(m) };
}
