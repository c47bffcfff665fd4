// The demo lab's recent past: what its benches recorded before `npm start` first ran, so a
// newcomer opens a lab that has been working (history to browse, fitted passes, finished runs with
// notes). Invented, like the benches: a script of drive commands and alignment changes per bench,
// played through the benches' own simulator, and the runs an operator kept over it. Pure: the
// server writes what `recordPast` yields (src/lib/server/seed-past.ts).
import type { CommandBody } from '../src/lib/contract/wire.ts';
import type { DemoBench } from './demo-benches.ts';
import { createSimulator, type InterferometerSim, type SimBatch } from './interferometer.ts';

export type PastAction =
  | Extract<CommandBody, { op: 'sweep' }>
  /** Hold at the mid-fringe point nearest `near` V, where the phase is read best, as an operator would. */
  | { op: 'mid-fringe'; near: number }
  /**
   * The optics or their surroundings changed while the drive held (a mirror walked in or knocked,
   * the lid closed): from here the bench has this visibility and thermal drift, and the phase
   * jumped by `phaseJumpRad`. What is left out stays as it was.
   */
  | { op: 'optics'; visibility?: number; phaseJumpRad?: number; driftRadPerS?: number };

export interface PastEvent {
  /** Minutes before the end of the recording. */
  at: number;
  action: PastAction;
}

export interface PastNote {
  at: number;
  by: 'operator' | 'admin';
  body: string;
  /** Taken with the figures on screen at that moment, computed from the recorded bins. */
  snapshot?: boolean;
}

export interface PastRun {
  title: string;
  /** Minutes before the end of the recording. */
  start: number;
  end: number;
  keep?: boolean;
  notes: PastNote[];
}

export interface DemoPast {
  benchId: string;
  /** Length of the recording, min. */
  minutes: number;
  /** Visibility of the optics when the recording begins (the bench's own when unset). */
  visibility?: number;
  /** In time order: decreasing `at`. */
  events: PastEvent[];
  runs: PastRun[];
}

/** Sweeps as the bench page suggests them: the scan across several fringes, 20 ms a step. */
const SWEEP_633 = { op: 'sweep', from: 10, to: 100, step: 0.2, dwell: 20 } as const;
const SWEEP_810 = { op: 'sweep', from: 5, to: 45, step: 0.1, dwell: 20 } as const;
const SWEEP_1550 = { op: 'sweep', from: -8, to: 8, step: 0.02, dwell: 10 } as const;

export const DEMO_PAST: readonly DemoPast[] = [
  {
    benchId: 'mz-633',
    minutes: 100,
    visibility: 0.9,
    events: [
      { at: 97, action: { ...SWEEP_633, sweeps: 2 } },
      { at: 95, action: { op: 'mid-fringe', near: 50 } },
      { at: 86, action: { op: 'optics', visibility: 0.985, phaseJumpRad: 2.2 } },
      { at: 84, action: { ...SWEEP_633, sweeps: 2 } },
      { at: 82, action: { op: 'mid-fringe', near: 50 } },
      // The lid goes on: a third of the drift.
      { at: 50, action: { op: 'optics', driftRadPerS: 0.001 } },
      { at: 49, action: { ...SWEEP_633, sweeps: 2 } },
      { at: 47, action: { op: 'mid-fringe', near: 50 } },
      { at: 38, action: { op: 'optics', visibility: 0.94, phaseJumpRad: 1.1 } },
      { at: 36, action: { ...SWEEP_633, sweeps: 2 } },
      { at: 35, action: { op: 'mid-fringe', near: 50 } },
      { at: 33, action: { op: 'optics', visibility: 0.98, phaseJumpRad: -0.7 } },
      { at: 32, action: { ...SWEEP_633, sweeps: 2 } },
      { at: 30, action: { op: 'mid-fringe', near: 50 } },
      { at: 15, action: { ...SWEEP_633, sweeps: 1 } },
      { at: 14, action: { op: 'mid-fringe', near: 50 } },
    ],
    runs: [
      {
        title: 'Arm B walk-in after the weekend',
        start: 98,
        end: 70,
        notes: [
          { at: 96, by: 'operator', snapshot: true, body: 'First sweep of the day, 10–100 V: three and a half fringes a pass, but the contrast is poor. Output B spot sits off-centre on the fibre tip; suspect M3 crept over the weekend.' },
          { at: 85.5, by: 'operator', body: 'Walked arm B with M3/M4, two iterations, overlap checked on the card at the far iris. Shutter on A open throughout.' },
          { at: 81.5, by: 'operator', snapshot: true, body: 'Sweep after the walk-in: fringes much deeper, visibility back near 0.98. Holding at mid-fringe to watch the drift with the lid off.' },
          { at: 72, by: 'operator', body: 'Drift about a fringe in half an hour with the lid off: thermal, as usual for this table in the morning.' },
        ],
      },
      {
        title: 'Phase noise at mid-fringe, lid closed',
        start: 50,
        end: 12,
        keep: true,
        notes: [
          { at: 48, by: 'operator', body: 'Lid on. Sweep ×2 to find the slope, then hold at mid-fringe and leave the room.' },
          { at: 45.5, by: 'operator', snapshot: true, body: 'Holding. Phase noise in 10 ms bins reads close to the shot-noise limit.' },
          { at: 37.5, by: 'operator', body: 'Visitor leaned on the breadboard edge: step in both rates, the fringe jumped. M2 knocked?' },
          { at: 34.5, by: 'operator', snapshot: true, body: 'Check sweep: visibility down to about 0.94, phase moved by about a radian. M2 is off.' },
          { at: 32.5, by: 'operator', body: 'Re-aligned M2 from the iris marks, lid back on.' },
          { at: 29.5, by: 'operator', snapshot: true, body: 'Sweep after re-alignment: visibility back near 0.98, fringe period unchanged. Holding at mid-fringe again.' },
          { at: 14.5, by: 'operator', snapshot: true, body: 'Closing sweep: visibility held for 15 min with the lid on.' },
          { at: 8, by: 'admin', body: 'Kept from trimming: the reference for the phase-noise comparison at the group meeting. Leave out the 5 min around the knock.' },
        ],
      },
    ],
  },
  {
    benchId: 'mz-810',
    minutes: 80,
    events: [
      { at: 77, action: { ...SWEEP_810, sweeps: 2 } },
      { at: 75, action: { op: 'mid-fringe', near: 25 } },
      { at: 50, action: { ...SWEEP_810, sweeps: 2 } },
      { at: 48, action: { op: 'mid-fringe', near: 25 } },
    ],
    runs: [
      {
        title: 'Heralded anticorrelation, 25 min hold',
        start: 78,
        end: 45,
        notes: [
          { at: 76, by: 'operator', snapshot: true, body: 'Pump on for 20 min, herald rate steady. Sweep 5–45 V ×2: clean fringes on both gated outputs.' },
          { at: 74, by: 'operator', body: 'Holding at mid-fringe so both gated outputs count about the same; α read over 10 s windows.' },
          { at: 62, by: 'operator', snapshot: true, body: 'α stays well below 1 window after window: triples at the accidental level.' },
          { at: 47.5, by: 'operator', snapshot: true, body: 'Closing sweep: visibility unchanged after the hold. Leaving the drive at mid-fringe.' },
        ],
      },
    ],
  },
  {
    benchId: 'mz-1550',
    minutes: 20,
    events: [
      { at: 19, action: { op: 'mid-fringe', near: 0 } },
      { at: 12, action: { ...SWEEP_1550, sweeps: 2 } },
      { at: 11, action: { op: 'mid-fringe', near: 0 } },
    ],
    runs: [],
  },
];

/** One stretch of simulated bins, on the gateway's grid. */
export interface PastChunk extends SimBatch {
  t0: number;
  dt: number;
}

/** Milliseconds before the end for `at` minutes, on a 100 ms grid (whole live batches). */
export function minutesBefore(at: number): number {
  return Math.round(at * 600) * 100;
}

/** Start of the recording that ends at `endMs`. */
export function pastStart(past: DemoPast, endMs: number): number {
  return endMs - minutesBefore(past.minutes);
}

/** The sweeps' spans, ms: each from its command to the next event (or the end), where its passes lie. */
export function sweepSpans(past: DemoPast, endMs: number): { from: number; to: number }[] {
  return past.events.flatMap((e, i) => {
    if (e.action.op !== 'sweep') return [];
    const next = past.events[i + 1];
    return [{ from: endMs - minutesBefore(e.at), to: endMs - (next ? minutesBefore(next.at) : 0) }];
  });
}

/** Throws on a script the recording cannot honour; the scenario is checked by its unit test too. */
export function checkPast(past: DemoPast, bench: DemoBench): void {
  let last = past.minutes;
  for (const e of past.events) {
    if (!(e.at < last && e.at > 0)) throw new Error(`${past.benchId}: event at ${e.at} min is not after the one before, or outside the recording`);
    last = e.at;
  }
  for (const r of past.runs) {
    if (!(r.start <= past.minutes && r.start > r.end && r.end >= 0)) throw new Error(`${past.benchId}: run "${r.title}" is not inside the recording`);
    let previous = r.start;
    for (const n of r.notes) {
      if (n.at > previous) throw new Error(`${past.benchId}: a note of "${r.title}" comes before the run starts or the note before it`);
      previous = n.at;
    }
  }
  if (bench.id !== past.benchId) throw new Error(`${past.benchId} is not ${bench.id}`);
}

type Optics = DemoBench['model']['optics'];

function withOptics(bench: DemoBench, optics: Optics) {
  return { ...bench.model, optics };
}

/** δ ≡ π/2 (mod π), both outputs at half their range: the nearest such point to `near`, by the simulator's own phase. */
function holdAtMidFringe(sim: InterferometerSim, bench: DemoBench, near: number): void {
  let x = near;
  sim.command({ op: 'hold', x });
  // Twice: the piezo's hysteresis moves the phase a little with the step itself.
  for (let i = 0; i < 2; i++) {
    const t = sim.truth();
    let d = (((Math.PI / 2 - t.phaseRad) % Math.PI) + Math.PI) % Math.PI;
    if (d > Math.PI / 2) d -= Math.PI;
    x = Math.min(bench.scan.max, Math.max(bench.scan.min, t.drive.x + (d / (2 * Math.PI)) * t.localPeriodV));
    // To the millivolt, as an operator types it.
    sim.command({ op: 'hold', x: Math.round(x * 1000) / 1000 });
  }
}

/**
 * The recording ending at `endMs` (a multiple of `dtMs`), in chunks of at most `chunkBins` bins.
 * Each alignment is a simulator of its own, seeded from the bench's seed, so the same script gives
 * the same bins on every machine.
 */
export function* recordPast(bench: DemoBench, past: DemoPast, endMs: number, dtMs: number, chunkBins = 6_000): Generator<PastChunk> {
  checkPast(past, bench);
  if (endMs % dtMs !== 0 || minutesBefore(past.minutes) % dtMs !== 0) throw new Error('the recording must lie on the bin grid');
  let alignment = 0;
  let optics: Optics = { ...bench.model.optics, visibility: past.visibility ?? bench.model.optics.visibility };
  let sim = createSimulator(withOptics(bench, optics), bench.seed);
  let t = pastStart(past, endMs);
  const runTo = function* (until: number): Generator<PastChunk> {
    while (t < until) {
      const n = Math.min(chunkBins, (until - t) / dtMs);
      yield { t0: t, dt: dtMs, ...sim.next(n, dtMs) };
      t += n * dtMs;
    }
  };
  for (const e of past.events) {
    yield* runTo(endMs - minutesBefore(e.at));
    const a = e.action;
    if (a.op === 'sweep') sim.command(a);
    else if (a.op === 'mid-fringe') holdAtMidFringe(sim, bench, a.near);
    else {
      const before = sim.truth();
      if (before.drive.mode !== 'hold') throw new Error(`${past.benchId}: the optics change at ${e.at} min while the drive sweeps`);
      // The new simulator's phase offset puts its phase at the held voltage where the old one
      // was, plus the jump: a simulator starts with no drift, so a probe at offset 0 reads the rest.
      alignment += 1;
      const next: Optics = { ...optics, visibility: a.visibility ?? optics.visibility, driftRadPerS: a.driftRadPerS ?? optics.driftRadPerS, phaseOffsetRad: 0 };
      const probe = createSimulator(withOptics(bench, next), 0);
      probe.command({ op: 'hold', x: before.drive.x });
      optics = { ...next, phaseOffsetRad: before.phaseRad + (a.phaseJumpRad ?? 0) - probe.truth().phaseRad };
      sim = createSimulator(withOptics(bench, optics), bench.seed + 7919 * alignment);
      sim.command({ op: 'hold', x: before.drive.x });
    }
  }
  yield* runTo(endMs);
}
