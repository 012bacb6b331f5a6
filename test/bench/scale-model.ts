/**
 * Scale-out model of distributed ingest: Amdahl's law (the Universal
 * Scalability Law with its coherency term at zero) fitted to the throughput
 * of 1 and 2 worker processes, capped by the capacity of the shared services
 * measured per scene.
 *
 *   X(N) = λ N / (1 + σ (N - 1))          (Gunther 2007, "Guerrilla Capacity Planning",
 *                                          USL with κ = 0; citation from memory)
 *   λ = X(1),  σ = (2 X(1) / X(2) - 1)    (the N = 2 point solved for σ)
 *
 * Why Amdahl and not the full USL: two measured points determine two
 * parameters (λ, σ); the USL's κ (crosstalk between workers) needs a third
 * point that a two-core machine cannot give. Workers here do not talk to each
 * other; everything they share is Redis (the queue), PostgreSQL (the results)
 * and the ingest command that feeds and watches the run. Those are bounded
 * explicitly by the operational laws instead (utilisation law, U = X · D;
 * Denning & Buzen 1978, "The Operational Analysis of Queueing Network Models",
 * Computing Surveys 10(3); citation from memory): a service with service demand
 * D seconds of CPU per scene on c cores cannot pass X = c / D scenes per second.
 * Redis executes commands on one thread (c = 1), as does the ingest command's
 * main thread; PostgreSQL runs one backend per connection, so it scales with
 * the cores given to it (c = the server's cores).
 *
 * Prediction: X(N) = min(Amdahl(N), each ceiling). The ceiling that binds first
 * is where the system saturates.
 *
 * On a shared two-core machine the 2-worker run also shares its cores with
 * PostgreSQL, Redis, the ingest command and whatever else runs, so the fitted σ
 * can come out at or above 1 (two workers no faster than one): that says the
 * machine was full, not that the workers contend. Then the fit falls back to
 * the service demands alone (asymptotic bound analysis; Lazowska et al. 1984,
 * "Quantitative System Performance", ch. 5; citation from memory): λ = 1 / the
 * worker CPU per scene (a worker with a core of its own), σ = 0, and the same
 * ceilings. Both fits are returned; `fit` says which one predicts.
 */

export interface ScaleInputs {
  /** Scenes per second with 1 and 2 worker processes (pinned to separate cores). */
  x1: number;
  x2: number;
  /** CPU seconds per scene of each shared service, measured (/proc) in the same runs. */
  postgresCpuPerScene: number;
  redisCpuPerScene: number;
  cliCpuPerScene: number;
  /** CPU seconds per scene of the worker processes (the parallel part). */
  workerCpuPerScene: number;
  /** Cores given to the PostgreSQL server in the prediction. */
  postgresCores: number;
}

export interface Ceiling {
  name: 'PostgreSQL' | 'Redis' | 'ingest command';
  scenesPerSecond: number;
  /** Workers at which the Amdahl curve reaches this ceiling, or null when it never does. */
  saturatesAtWorkers: number | null;
}

export interface ScalePrediction {
  model: string;
  /** 'throughput': λ and σ from X(1) and X(2); 'demand': λ = 1 / worker CPU per scene, σ = 0 (the throughput fit was unusable). */
  fit: 'throughput' | 'demand';
  /** Why the demand fit was used, or null. */
  fallbackReason: string | null;
  /** The throughput fit's values, whichever fit predicts. */
  throughputFit: { lambda: number; sigmaRaw: number };
  lambda: number;
  sigma: number;
  /** σ as fitted before clamping to [0, 1] (outside it the two points are noise, not contention). */
  sigmaRaw: number;
  ceilings: Ceiling[];
  /** The first ceiling the curve meets, or null when contention alone bounds it (asymptote λ/σ). */
  bottleneck: Ceiling | null;
  /** λ / σ: the Amdahl asymptote, scenes per second (Infinity when σ = 0). */
  asymptote: number;
  predictions: { workers: number; amdahl: number; predicted: number; boundBy: string }[];
  /**
   * The demand fit's predictions whichever fit predicts (λ = 1 / worker CPU per
   * scene, σ = 0, the same ceilings): the bound for workers with a core each,
   * beside a throughput fit taken on a machine whose cores the servers share.
   */
  demandPredictions: { workers: number; predicted: number; boundBy: string }[] | null;
}

/** Amdahl throughput of `n` workers. */
export function amdahl(lambda: number, sigma: number, n: number): number {
  return (lambda * n) / (1 + sigma * (n - 1));
}

/**
 * Workers at which λN / (1 + σ(N - 1)) reaches `x`: N = x (1 - σ) / (λ - x σ),
 * or null when the curve's asymptote λ/σ stays below x.
 */
export function workersToReach(lambda: number, sigma: number, x: number): number | null {
  const denominator = lambda - x * sigma;
  if (denominator <= 0) return null;
  return Math.max(1, (x * (1 - sigma)) / denominator);
}

/**
 * Fit and predict.
 * @example fitScaleModel({ x1: 10, x2: 18, postgresCpuPerScene: 0.002, redisCpuPerScene: 0.001, cliCpuPerScene: 0.001, workerCpuPerScene: 0.09, postgresCores: 4 }, [1, 2, 4])
 */
export function fitScaleModel(input: ScaleInputs, workers: readonly number[] = [1, 2, 4, 8, 16, 32, 64]): ScalePrediction {
  const sigmaRaw = (2 * input.x1) / input.x2 - 1;
  const usable = Number.isFinite(sigmaRaw) && sigmaRaw >= 0 && sigmaRaw < 1;
  const fit: ScalePrediction['fit'] = usable || !(input.workerCpuPerScene > 0) ? 'throughput' : 'demand';
  const fallbackReason = fit === 'demand'
    ? `two workers gave ${(input.x2 / input.x1).toFixed(2)}x one (sigma ${sigmaRaw.toFixed(2)}, outside [0, 1)): the machine's cores were taken, so lambda = 1 / worker CPU per scene and sigma = 0`
    : null;
  const lambda = fit === 'throughput' ? input.x1 : 1 / input.workerCpuPerScene;
  const sigma = fit === 'throughput' ? Math.min(1, Math.max(0, sigmaRaw)) : 0;
  const ceiling = (name: Ceiling['name'], capacity: number): Ceiling => ({
    name, scenesPerSecond: capacity, saturatesAtWorkers: Number.isFinite(capacity) ? workersToReach(lambda, sigma, capacity) : null,
  });
  const ceilings = [
    ceiling('PostgreSQL', input.postgresCpuPerScene > 0 ? input.postgresCores / input.postgresCpuPerScene : Infinity),
    ceiling('Redis', input.redisCpuPerScene > 0 ? 1 / input.redisCpuPerScene : Infinity),
    ceiling('ingest command', input.cliCpuPerScene > 0 ? 1 / input.cliCpuPerScene : Infinity),
  ];
  const reached = ceilings.filter((c) => c.saturatesAtWorkers !== null).sort((a, b) => a.saturatesAtWorkers! - b.saturatesAtWorkers!);
  const lowest = ceilings.reduce((m, c) => (c.scenesPerSecond < m.scenesPerSecond ? c : m));
  const curve = (l: number, sg: number) => workers.map((n) => {
    const a = amdahl(l, sg, n);
    return a <= lowest.scenesPerSecond
      ? { workers: n, amdahl: a, predicted: a, boundBy: 'workers (Amdahl)' }
      : { workers: n, amdahl: a, predicted: lowest.scenesPerSecond, boundBy: lowest.name };
  });
  const predictions = curve(lambda, sigma);
  const demandPredictions = input.workerCpuPerScene > 0
    ? curve(1 / input.workerCpuPerScene, 0).map(({ workers: n, predicted, boundBy }) => ({ workers: n, predicted, boundBy }))
    : null;
  return {
    model: 'Amdahl (USL with kappa = 0) fitted to 1 and 2 workers, capped by c / D of PostgreSQL, Redis and the ingest command',
    fit, fallbackReason, throughputFit: { lambda: input.x1, sigmaRaw },
    lambda, sigma, sigmaRaw, ceilings, bottleneck: reached[0] ?? null,
    asymptote: sigma > 0 ? lambda / sigma : Infinity,
    predictions,
    demandPredictions,
  };
}
