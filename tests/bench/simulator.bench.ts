// How long the simulator takes for 1000 bins of the heaviest demo bench (a, b, h and cc): it runs
// in real time inside the simulated gateways, beside the server.
import { pathToFileURL } from 'node:url';
import { createSimulator } from '../../simulators/interferometer.ts';
import { findDemoBench } from '../../simulators/demo-benches.ts';

export async function run(): Promise<object> {
  const sim = createSimulator(findDemoBench('mz-810')!.model, 1);
  sim.command({ op: 'sweep', from: 0, to: 75, step: 0.01, dwell: 1, sweeps: 1000 });
  for (let i = 0; i < 50; i++) sim.next(1000, 1);
  const times: number[] = [];
  for (let i = 0; i < 200; i++) {
    const start = performance.now();
    sim.next(1000, 1);
    times.push(performance.now() - start);
  }
  times.sort((a, b) => a - b);
  return { name: 'simulator', binsPerCall: 1000, channels: 4, medianMs: times[100], p99Ms: times[198] };
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) console.log(JSON.stringify(await run(), null, 2));
