// Import benchmark: a counts CSV in the export's format (a heralded demo bench's simulated counts,
// invented numbers only: three channels, x and cc, 1 ms bins) checked and imported through the
// real HTTP routes of the built app, each figure beside baselines measured in the same run:
//  - preview (the "Check file" route) and import, wall time by curl in a child process, so the
//    client's sending is not on the server's thread; the import's sweep fits (which run after its
//    COMMIT and before its answer) are timed apart, so the store is judged by itself;
//  - the reading alone: previewImport called in process on the same bytes, no HTTP;
//  - csv-parse alone on the same table (default options, records handed to a listener that does
//    nothing);
//  - plain COPY of the same bins into a one-row-per-bin table (psql \copy), as the ingest
//    benchmark's baseline.
// Bins are channel bins (rows × channels), as in the ingest benchmark.
// Run: `node --import tsx tests/bench/import.bench.ts [--rows N] [--repeat N] [--profile <dir>]`
// (default 400,000 rows, 3 repeats; the profile option writes a CPU profile of this process, the
// server's thread, for one preview and one import). Prints a JSON summary.
import { execFile, execFileSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { Session } from 'node:inspector/promises';
import os from 'node:os';
import path from 'node:path';
import { Readable } from 'node:stream';
import { pathToFileURL } from 'node:url';
import { parse } from 'csv-parse';
import { columnsOf, metadataLines, rowLine, type CsvMeta } from '../../src/lib/counts-csv.ts';
import { getDbHandle } from '../../src/lib/server/db/index.ts';
import { postgresBinDir } from '../../src/lib/server/db/cluster.ts';
import { previewImport } from '../../src/lib/server/export/import.ts';
import { createBench } from '../../src/lib/server/provisioning.ts';
import { runtime } from '../../src/lib/server/runtime.ts';
import { buildIfStale } from '../../src/server/build.ts';
import { startApp } from '../../src/server/app.ts';
import { livePathOptionsFromEnv } from '../../src/server/live-path.ts';
import { createDemoSimulator, findDemoBench } from '../../simulators/demo-benches.ts';
import { userWithToken } from '../helpers/web-app.ts';
import { setup as startTestDb, teardown as stopTestDb } from '../setup/global-db.ts';

const DT_MS = 1;
/** 2026-01-01T00:00Z: a recording of the past, on the 1 ms grid. */
const T0 = 1_767_225_600_000;
/** What an HTTP body arrives in on loopback, and what the in-process readings are fed. */
const CHUNK_BYTES = 64 * 1024;

const round = (v: number, d = 2) => Math.round(v * 10 ** d) / 10 ** d;
const median = (v: number[]) => {
  const s = [...v].sort((a, b) => a - b);
  return s.length % 2 ? s[(s.length - 1) / 2]! : (s[s.length / 2 - 1]! + s[s.length / 2]!) / 2;
};

/** The file and the same bins as one-row-per-bin CSV lines for COPY. */
function demoFile(rows: number): { csv: Buffer; copyLines: string; channels: number; rows: number } {
  const bench = findDemoBench('mz-810')!;
  const sim = createDemoSimulator(bench);
  // A 0–60 V piezo scan in 10 mV steps of 2 ms: a 12 s pass, as a slow sweep of the demo bench.
  const res = sim.command({ op: 'sweep', from: 0, to: 60, step: 0.01, dwell: 2, sweeps: 10_000 });
  if (!res.ok) throw new Error(res.error);
  const gateway = bench.gateway;
  const keys = bench.channels.map((c) => c.key);
  const meta: CsvMeta = {
    benchId: bench.id,
    benchName: bench.name,
    wavelengthNm: bench.wavelengthNm,
    fromMs: T0,
    toMs: T0 + rows * DT_MS,
    run: null,
    channels: bench.channels.map((c) => ({ gateway, key: c.key, label: c.label, role: c.role, darkRate: null, darkRateErr: null, deadTimeNs: null, deadTimeModel: 'nonparalyzable', efficiency: 1 })),
    hasX: true,
    hasCc: true,
  };
  const parts: string[] = [metadataLines(meta) + columnsOf(meta).join(',') + '\n'];
  const copy: string[] = [];
  for (let done = 0; done < rows; done += 1000) {
    const n = Math.min(1000, rows - done);
    const b = sim.next(n, DT_MS);
    let text = '';
    for (let i = 0; i < n; i++) {
      const t = T0 + (done + i) * DT_MS;
      const values = keys.map((k) => b.ch[k]![i]!);
      text += rowLine({ t, values, x: b.x[i]!, cc: b.cc![i]! }, true, true);
      for (let k = 0; k < keys.length; k++) copy.push(`${gateway},${keys[k]},${t},${values[k]}`);
    }
    parts.push(text);
  }
  return { csv: Buffer.from(parts.join('')), copyLines: copy.join('\n') + '\n', channels: keys.length, rows };
}

function chunks(buf: Buffer): Buffer[] {
  const out: Buffer[] = [];
  for (let i = 0; i < buf.length; i += CHUNK_BYTES) out.push(buf.subarray(i, i + CHUNK_BYTES));
  return out;
}

function webStream(buf: Buffer): ReadableStream<Uint8Array> {
  const parts = chunks(buf);
  let i = 0;
  return new ReadableStream<Uint8Array>({
    pull(controller) {
      if (i < parts.length) controller.enqueue(parts[i++]!);
      else controller.close();
    },
  });
}

/**
 * csv-parse by itself, its default options, over the table (the header line on: the `#` lines
 * have other numbers of fields, which its defaults refuse); records go nowhere.
 */
async function csvParseAlone(buf: Buffer): Promise<{ ms: number; records: number }> {
  const table = buf.subarray(buf.indexOf('\nt_ms,') + 1);
  const started = performance.now();
  let records = 0;
  await new Promise<void>((resolve, reject) => {
    const parser = Readable.from(chunks(table)).pipe(parse());
    parser.on('data', () => void records++);
    parser.on('end', () => resolve());
    parser.on('error', reject);
  });
  return { ms: performance.now() - started, records };
}

/** POSTs the file with curl (its own process); curl's own total time, and the answer. */
async function curlPost(url: string, token: string, file: string): Promise<{ ms: number; status: number; body: string }> {
  const out = path.join(path.dirname(file), `answer-${Date.now()}-${Math.random().toString(36).slice(2)}.json`);
  const stdout = await new Promise<string>((resolve, reject) =>
    execFile(
      'curl',
      ['-s', '-o', out, '-w', '%{http_code} %{time_total}', '-H', `authorization: Bearer ${token}`, '-H', 'content-type: text/csv', '--data-binary', `@${file}`, url],
      (err, so) => (err ? reject(err) : resolve(so)),
    ),
  );
  const [status, seconds] = stdout.trim().split(' ');
  const body = readFileSync(out, 'utf8');
  rmSync(out);
  return { ms: Number(seconds) * 1000, status: Number(status), body };
}

/** Writes a CPU profile of this thread (the server's) while `fn` runs, when a folder was asked for. */
async function profiled<T>(dir: string | null, phase: string, fn: () => Promise<T>): Promise<T> {
  if (!dir) return fn();
  const session = new Session();
  session.connect();
  await session.post('Profiler.enable');
  await session.post('Profiler.setSamplingInterval', { interval: 200 });
  await session.post('Profiler.start');
  try {
    return await fn();
  } finally {
    const { profile } = await session.post('Profiler.stop');
    mkdirSync(dir, { recursive: true });
    writeFileSync(path.join(dir, `${phase}.cpuprofile`), JSON.stringify(profile));
    session.disconnect();
  }
}

/** COPY of the same bins into a table of one row per channel bin (the ingest benchmark's baseline). */
async function copyBaseline(file: string, bins: number): Promise<number> {
  const { pool } = getDbHandle();
  await pool.query('drop table if exists bench_copy_import');
  await pool.query('create table bench_copy_import (gateway_id text not null, key text not null, t bigint not null, count int not null, primary key (gateway_id, key, t))');
  const started = performance.now();
  execFileSync(path.join(postgresBinDir(), 'psql'), [process.env['DATABASE_URL']!, '-q', '-c', `\\copy bench_copy_import from '${file}' csv`]);
  const ms = performance.now() - started;
  const { rows } = await pool.query<{ n: number }>('select count(*)::float8 as n from bench_copy_import');
  if (rows[0]!.n !== bins) throw new Error(`COPY stored ${rows[0]!.n} of ${bins} bins`);
  await pool.query('drop table bench_copy_import');
  return ms;
}

/** CPU time the machine's tasks spent waiting for a CPU (Linux PSI, ms), to tell a run on a busy machine. */
function cpuStallMs(): number | null {
  if (!existsSync('/proc/pressure/cpu')) return null;
  return Number(/^some .*total=(\d+)/m.exec(readFileSync('/proc/pressure/cpu', 'utf8'))?.[1] ?? NaN) / 1000;
}

/** What the preview answers, the part checked here. */
type Checked = { rows: number; issues: unknown[]; dtMs: number | null };

export async function run(opts: { rows?: number; repeat?: number; profileDir?: string | null } = {}) {
  const rows = opts.rows ?? 400_000;
  const repeat = opts.repeat ?? 3;
  const profileDir = opts.profileDir ?? null;
  process.env['ASTRO_TELEMETRY_DISABLED'] = '1';
  process.env['FRINGEWISE_SIMULATE'] = '0';
  delete process.env['SMTP_URL'];
  buildIfStale();
  const ownDb = !process.env['DATABASE_URL'];
  if (ownDb) await startTestDb();
  const dir = mkdtempSync(path.join(os.tmpdir(), 'fringewise-import-bench-'));
  const app = await startApp({ port: 0, host: '127.0.0.1', seed: false, simulate: false, build: false, web: true, live: { ...livePathOptionsFromEnv(), mqttUrl: null, mqttPort: 0 } });
  try {
    const stallsBefore = cpuStallMs();
    const generated = performance.now();
    const file = demoFile(rows);
    const generateMs = performance.now() - generated;
    const bins = file.rows * file.channels;
    const csvPath = path.join(dir, 'counts.csv');
    const copyPath = path.join(dir, 'bins.csv');
    writeFileSync(csvPath, file.csv);
    writeFileSync(copyPath, file.copyLines);
    execFileSync('chmod', ['-R', 'a+rX', dir]);
    const { token } = await userWithToken('operator', 'import-bench');
    const tag = Date.now().toString(36);
    let benches = 0;
    const freshBench = async () => (await createBench({ id: `ib-${tag}-${benches++}`, name: 'Import benchmark', wavelengthNm: 810 })).id;

    // The fits run after the import's COMMIT, inside its answer: timed here to tell them apart.
    const analysis = runtime().analysis!;
    const fitStored = analysis.fitStored.bind(analysis);
    const fits: { ms: number; passes: number }[] = [];
    analysis.fitStored = async (...args) => {
      const started = performance.now();
      const passes = await fitStored(...args);
      fits.push({ ms: performance.now() - started, passes });
      return passes;
    };

    // Warm-up: the routes' modules loaded and their code optimised before anything is timed.
    const warmBench = await freshBench();
    await curlPost(`${app.url}/api/v1/benches/${warmBench}/import/preview`, token, csvPath);

    const csvParse: number[] = [];
    const reading: number[] = [];
    const preview: number[] = [];
    const imports: { totalMs: number; fitMs: number; storeMs: number; passes: number }[] = [];
    const copy: number[] = [];
    let checked: Checked | null = null;
    for (let r = 0; r < repeat; r++) {
      const alone = await csvParseAlone(file.csv);
      if (alone.records !== rows + 1) throw new Error(`csv-parse read ${alone.records} records, not the header and ${rows} rows`);
      csvParse.push(alone.ms);

      const bench = await freshBench();
      const started = performance.now();
      const p = await previewImport(bench, webStream(file.csv));
      reading.push(performance.now() - started);
      if (p.issues.length || p.rows !== rows) throw new Error(`preview read ${p.rows} rows with issues ${JSON.stringify(p.issues)}`);

      const res = await profiled(r === 0 ? profileDir : null, 'preview', () => curlPost(`${app.url}/api/v1/benches/${bench}/import/preview`, token, csvPath));
      if (res.status !== 200) throw new Error(`preview answered ${res.status}: ${res.body.slice(0, 500)}`);
      checked = JSON.parse(res.body) as Checked;
      preview.push(res.ms);

      const fitsBefore = fits.length;
      const imp = await profiled(r === 0 ? profileDir : null, 'import', () => curlPost(`${app.url}/api/v1/benches/${bench}/import?title=Benchmark%20${r}`, token, csvPath));
      if (imp.status !== 201) throw new Error(`import answered ${imp.status}: ${imp.body.slice(0, 500)}`);
      const stored = JSON.parse(imp.body) as { bins: number };
      const fit = fits[fitsBefore] ?? { ms: 0, passes: 0 };
      imports.push({ totalMs: imp.ms, fitMs: fit.ms, storeMs: imp.ms - fit.ms, passes: fit.passes });
      if (stored.bins !== file.rows) throw new Error(`import stored ${stored.bins} of ${file.rows} rows`);

      copy.push(await copyBaseline(copyPath, bins));
    }
    const stallsAfter = cpuStallMs();

    const perS = (ms: number) => round(bins / (ms / 1000), 0);
    const m = {
      csvParseAloneMs: median(csvParse),
      readingMs: median(reading),
      previewMs: median(preview),
      importMs: median(imports.map((i) => i.totalMs)),
      importStoreMs: median(imports.map((i) => i.storeMs)),
      importFitMs: median(imports.map((i) => i.fitMs)),
      copyMs: median(copy),
    };
    const summary = {
      setup: { rows, channels: file.channels, bins, dtMs: DT_MS, fileMiB: round(file.csv.length / 1024 / 1024), hasX: true, hasCc: true, repeat, generateMs: round(generateMs, 0) },
      checked: checked && { rows: checked.rows, dtMs: checked.dtMs, issues: checked.issues.length },
      medians: Object.fromEntries(Object.entries(m).map(([k, v]) => [k, round(v, 0)])),
      binsPerS: {
        csvParseAlone: perS(m.csvParseAloneMs),
        reading: perS(m.readingMs),
        preview: perS(m.previewMs),
        importStore: perS(m.importStoreMs),
        copy: perS(m.copyMs),
      },
      ratios: {
        // How many times the baseline's time each takes (1 = as fast as the baseline).
        readingVsCsvParseAlone: round(m.readingMs / m.csvParseAloneMs),
        previewVsCsvParseAlone: round(m.previewMs / m.csvParseAloneMs),
        importStoreVsCopy: round(m.importStoreMs / m.copyMs),
        importVsCopy: round(m.importMs / m.copyMs),
      },
      runs: { csvParseAloneMs: csvParse.map((v) => round(v, 0)), readingMs: reading.map((v) => round(v, 0)), previewMs: preview.map((v) => round(v, 0)), imports: imports.map((i) => ({ totalMs: round(i.totalMs, 0), fitMs: round(i.fitMs, 0), storeMs: round(i.storeMs, 0), passes: i.passes })), copyMs: copy.map((v) => round(v, 0)) },
      // Over the whole run: how long the machine's tasks waited for a CPU (other work on the 2 cores).
      cpuStallMs: stallsBefore !== null && stallsAfter !== null ? round(stallsAfter - stallsBefore, 0) : null,
    };
    console.log(JSON.stringify(summary, null, 2));
    return summary;
  } finally {
    await app.close();
    rmSync(dir, { recursive: true, force: true });
    if (ownDb) await stopTestDb();
  }
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) {
  const arg = (name: string) => {
    const i = process.argv.indexOf(name);
    return i > 0 ? (process.argv[i + 1] ?? null) : null;
  };
  await run({ rows: Number(arg('--rows') ?? 400_000), repeat: Number(arg('--repeat') ?? 3), profileDir: arg('--profile') });
  process.exit(0);
}
