// Worker-thread entry of the analysis pool: runs fits posted by analysis-worker.ts and posts the
// results back. Pure computation only; the pool owns the lifecycle.
import { parentPort } from 'node:worker_threads';
import { fitSweeps } from '../analysis/fit-sweeps.ts';
import { fitFringes } from '../analysis/fringe-fit.ts';
import type { AnalysisJob, AnalysisReply } from './analysis-worker.ts';

const port = parentPort;
if (!port) throw new Error('analysis-worker.thread.ts must run as a worker thread');

port.on('message', (job: AnalysisJob) => {
  let reply: AnalysisReply;
  try {
    const result = job.kind === 'sweeps' ? fitSweeps(job.input) : fitFringes(job.data, job.options);
    reply = { id: job.id, ok: true, result };
  } catch (err) {
    reply = { id: job.id, ok: false, error: err instanceof Error ? err.message : String(err) };
  }
  port.postMessage(reply);
});
