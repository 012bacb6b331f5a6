/** The job tree of a run: derive ← scene (one per file), with content-derived job ids. */
import { fingerprint } from '../core/hash.js';
import type { SceneData } from '../jobs/scene.js';
import type { ThermalZonalData, ZonalData } from '../jobs/zonal.js';
import type { OwnEmissivityInputs } from '../core/thermal/index.js';
import type { DeriveData } from '../jobs/derive.js';
import { deriveJobId } from '../queue/tree.js';
import type { JobSpec } from '../queue/types.js';
import type { ManifestEntry, SceneKind } from './archive.js';

/**
 * Build the job tree: derive ← scene (one per file). `knownHashes`: the content
 * hashes the store had a scene for when the run was built (their jobs look for
 * earlier results; the others need not).
 */
export function buildFlow(args: {
  identity: string;
  runId: number;
  files: { path: string; contentHash: string; kind?: SceneKind; manifest?: ManifestEntry }[];
  targetIds: string[];
  params: Record<string, unknown>;
  zonal: Omit<ZonalData, 'path' | 'targetIds' | 'targetsKey' | 'qa'>;
  knownHashes?: ReadonlySet<string>;
  derive: Omit<DeriveData, 'runId'>;
  qaMaskBits?: number;
  /** Emissivity inputs shared by every thermal scene of the run (each file adds its own manifest inputs). */
  thermal?: Omit<ThermalZonalData, 'own'>;
}): JobSpec {
  const targetsKey = fingerprint(args.targetIds, args.params);
  const children: JobSpec[] = args.files.map((f) => {
    const qa = f.manifest?.qa && args.qaMaskBits !== undefined ? { path: f.manifest.qa, maskBits: args.qaMaskBits } : undefined;
    const data: SceneData = {
      ...args.zonal, path: f.path, contentHash: f.contentHash, runId: args.runId, manifest: f.manifest, defaultKind: f.kind,
      targetIds: args.targetIds, targetsKey, qa,
    };
    if (args.knownHashes && !args.knownHashes.has(f.contentHash)) data.newToStore = true;
    if (args.thermal && mayBeThermal(f.manifest, f.kind)) data.thermal = thermalDataOf(args.thermal, f.manifest);
    return { name: 'scene', id: deriveJobId('scene', args.identity, f.contentHash, targetsKey, f.manifest ?? null, f.kind ?? null), data };
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
