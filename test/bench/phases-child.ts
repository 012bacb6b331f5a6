/**
 * Child process of the bench: a cold zonal run profiled phase by phase in a
 * fresh Node process (as the CLI runs it), then warm repeats.
 *
 *     node dist/test/bench/phases-child.js RASTER DISTRICTS [WARM_REPEATS]
 *
 * Prints one JSON object: bootMs (process start to this module), importMs
 * (loading the zonal modules), cold (first run) and warm (median per phase).
 */
const bootMs = performance.now();
const { profileZonalRun } = await import('./profile.js');
const { median } = await import('./timing.js');
const importMs = performance.now() - bootMs;

const [rasterPath, districtsPath, repeatsText] = process.argv.slice(2);
if (!rasterPath || !districtsPath) {
  process.stderr.write('usage: phases-child.js RASTER DISTRICTS [WARM_REPEATS]\n');
  process.exit(2);
}
const cold = await profileZonalRun(rasterPath, districtsPath);
const repeats = Math.max(1, Number(repeatsText ?? 3) || 3);
const runs: Array<typeof cold> = [];
for (let k = 0; k < repeats; k++) runs.push(await profileZonalRun(rasterPath, districtsPath));
const warm = Object.fromEntries(Object.keys(cold).map((key) => [key, median(runs.map((r) => r[key as keyof typeof r]))]));
process.stdout.write(JSON.stringify({ bootMs, importMs, cold, warm }) + '\n');
