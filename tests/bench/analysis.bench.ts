// How long the engine takes to fit a pair of 2,000-point sweeps (one up, one down, both outputs):
// the work done for every completed triangle scan. Target: median under 20 ms on the 2-core host.
import { pathToFileURL } from 'node:url';
import { fitSweeps, type FitSweepsInput } from '../../src/lib/analysis/fit-sweeps.ts';
import { simulateSweep } from '../../src/lib/analysis/test-fixtures.ts';
import { AnalysisPool } from '../../src/lib/server/analysis-worker.ts';

const BINS = 2000; // per sweep
const RUNS = 100;
const WARMUP = 30; // JIT warm-up runs, not timed

function pairOfSweeps(seed: number, dark: number): FitSweepsInput {
  // ~4 fringes per sweep at 1,000 counts per bin per output, 5% hysteresis on the way down.
  const up = simulateSweep({ bins: BINS, darkA: dark, darkB: dark, seed });
  const down = simulateSweep({ bins: BINS, period: 2.625, down: true, darkA: dark, darkB: dark, seed: seed + 1 });
  return {
    x: Float64Array.of(...up.x, ...down.x),
    countsA: Float64Array.of(...up.countsA, ...down.countsA),
    countsB: Float64Array.of(...up.countsB, ...down.countsB),
    ...(dark > 0 ? { fit: { darkA: dark, darkB: dark } } : {}),
  };
}

// The minimum shows the cost on an idle core when other processes share the machine.
function stats(times: number[]): { medianMs: number; p90Ms: number; minMs: number } {
  const t = [...times].sort((a, b) => a - b);
  return { medianMs: t[Math.floor(t.length / 2)] as number, p90Ms: t[Math.floor(t.length * 0.9)] as number, minMs: t[0] as number };
}

async function time(fn: () => unknown): Promise<{ medianMs: number; p90Ms: number; minMs: number }> {
  for (let i = 0; i < WARMUP; i++) await fn();
  const times: number[] = [];
  for (let i = 0; i < RUNS; i++) {
    const start = performance.now();
    await fn();
    times.push(performance.now() - start);
  }
  return stats(times);
}

export async function run(): Promise<object> {
  const plain = pairOfSweeps(1, 0);
  const calibrated = pairOfSweeps(3, 5);
  const check = fitSweeps(plain);
  if (check.length !== 2 || !check.every((p) => p.fit.ok)) throw new Error('benchmark data did not fit: two passes expected');
  const uncalibratedFit = await time(() => fitSweeps(plain));
  const darkCalibratedFit = await time(() => fitSweeps(calibrated));
  // Round trip through the worker pool: what the ingest path waits for (structured-clone copies).
  const pool = new AnalysisPool({ size: 1 });
  const viaWorker = await time(() => pool.fitSweeps(plain));
  await pool.close();
  return {
    name: 'analysis',
    sweeps: 2,
    binsPerSweep: BINS,
    runs: RUNS,
    targetMedianMs: 20,
    uncalibrated: uncalibratedFit,
    darkCalibrated: darkCalibratedFit,
    workerRoundTrip: viaWorker,
  };
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) console.log(JSON.stringify(await run(), null, 2));
