// Bootstrap for the analysis worker when the sources run as TypeScript (tsx: development, tests,
// the server). On Node 20 a worker started with `execArgv: ['--import', 'tsx']` still loads its
// entry without tsx's hooks, so this plain module registers tsx inside the worker first, then
// imports the TypeScript entry. Messages posted meanwhile wait in the port's queue.
import { workerData } from 'node:worker_threads';
import { register } from 'tsx/esm/api';

register();
await import(workerData.entry);
