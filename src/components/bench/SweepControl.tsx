// Drive control for operators: a sweep (from/to/step/dwell/sweeps), hold at a point, hold at
// mid-fringe from the latest fit, stop. The admin's drive limits are shown here and enforced by the
// server; the laser safety caution sits where the scan is started. The drive strip at the top of the
// page (DriveStrip) links here by the section's id.
import { useState, type FormEvent } from 'react';
import type { BenchViewData } from '../../lib/bench-view.ts';
import { sweepFit, type Sweep } from '../../lib/client/api.ts';
import { sendDriveCommand } from '../../lib/client/drive-command.ts';
import type { CommandBody } from '../../lib/contract/wire.ts';
import { midFringeHold } from './mid-fringe.ts';
import { DriveStateLine } from './DriveStateLine.tsx';
import type { DriveTracker } from '../../lib/client/drive-state.ts';

interface Props {
  /** What the piezo is doing now, from the positions in the counts. */
  drive: DriveTracker;
  bench: BenchViewData;
  lastSweep: Sweep | null;
  /** The latest pass of each direction, where a mid-fringe point is read from. */
  lastPasses: Sweep[];
  /** Called after a sweep was accepted, so the fringe view starts afresh. */
  onSweepStarted: () => void;
}

/**
 * What a sweep may span: the admin's limits (the server refuses beyond them) narrowed to the range
 * the drive's gateway reports it can reach (the gateway refuses beyond that).
 */
export function reachable(bench: BenchViewData): { min: number; max: number; gateway: { min: number; max: number } | null } {
  const owner = bench.outA?.split('/')[0];
  const scan = bench.gateways.find((g) => g.id === owner)?.scan ?? bench.gateways.find((g) => g.scan)?.scan ?? null;
  const min = scan ? Math.max(bench.drive.min, scan.min) : bench.drive.min;
  const max = scan ? Math.min(bench.drive.max, scan.max) : bench.drive.max;
  // Disjoint ranges: keep the admin's, so the server's refusal explains the problem.
  return min < max ? { min, max, gateway: scan } : { min: bench.drive.min, max: bench.drive.max, gateway: scan };
}

export function SweepControl({ bench, lastSweep, lastPasses, onSweepStarted, drive }: Props) {
  const d = bench.drive;
  const range = reachable(bench);
  const [from, setFrom] = useState(String(range.min));
  const [to, setTo] = useState(String(range.min + (range.max - range.min) / 2));
  const [step, setStep] = useState(String(Math.min(d.maxStep, 0.05)));
  const [dwell, setDwell] = useState(String(Math.max(d.minDwellMs, 20)));
  const [sweeps, setSweeps] = useState('4');
  const [holdX, setHoldX] = useState(String((range.min + range.max) / 2));
  const [busy, setBusy] = useState(false);
  const [message, setMessage] = useState<{ ok: boolean; text: string } | null>(null);

  const send = async (cmd: CommandBody, what: string) => {
    setBusy(true);
    setMessage(null);
    const outcome = await sendDriveCommand(bench.id, cmd, what);
    setMessage(outcome);
    setBusy(false);
    if (outcome.ok && cmd.op === 'sweep') onSweepStarted();
  };

  const startSweep = (e: FormEvent) => {
    e.preventDefault();
    void send({ op: 'sweep', from: Number(from), to: Number(to), step: Number(step), dwell: Number(dwell), sweeps: Number(sweeps) }, 'Sweep');
  };

  const holdAt = (e: FormEvent) => {
    e.preventDefault();
    const x = holdX.trim() === '' ? Number.NaN : Number(holdX);
    if (!Number.isFinite(x)) setMessage({ ok: false, text: 'Hold needs a position in volts.' });
    else void send({ op: 'hold', x }, `Hold at ${x} V`);
  };

  const state = drive.state(Date.now());
  const held = midFringeHold(
    lastPasses.flatMap((p) => {
      const fit = sweepFit(p);
      return fit ? [{ direction: p.direction, fit }] : [];
    }),
    state.kind === 'unknown' ? null : state.x,
    Math.min(Number(from), Number(to)),
    Math.max(Number(from), Number(to)),
    (Number(from) + Number(to)) / 2,
  );
  const mid = held?.x ?? null;
  // Each sweep goes there and back: twice the steps between From and To.
  const estSeconds = (2 * Math.abs(Number(to) - Number(from)) / Math.max(Number(step), 1e-9)) * Number(dwell) * Number(sweeps) / 1000;

  return (
    <section id="drive" className="card scroll-mt-16" aria-labelledby="drive-h">
      <div className="mb-3 flex items-baseline justify-between gap-2">
        <h2 id="drive-h" className="font-semibold">Drive</h2>
        <p className="figure text-right text-xs text-muted" data-testid="drive-limits">
          limits {d.min}–{d.max} V · step ≤ {d.maxStep} V · dwell ≥ {d.minDwellMs} ms
          {range.gateway && <><br />drive reaches {range.gateway.min}–{range.gateway.max} V</>}
        </p>
      </div>
      <div className="mb-3"><DriveStateLine tracker={drive} /></div>
      <form onSubmit={startSweep} className="space-y-3">
        <div className="grid grid-cols-2 gap-2 sm:grid-cols-5">
          <label><span className="label">From (V)</span><input className="field figure" type="number" step="any" min={range.min} max={range.max} required value={from} onChange={(e) => setFrom(e.target.value)} /></label>
          <label><span className="label">To (V)</span><input className="field figure" type="number" step="any" min={range.min} max={range.max} required value={to} onChange={(e) => setTo(e.target.value)} /></label>
          <label><span className="label">Step (V)</span><input className="field figure" type="number" step="any" min="0" max={d.maxStep} required value={step} onChange={(e) => setStep(e.target.value)} /></label>
          <label><span className="label">Dwell (ms)</span><input className="field figure" type="number" step="1" min={d.minDwellMs} max="60000" required value={dwell} onChange={(e) => setDwell(e.target.value)} /></label>
          <label title="One sweep runs the drive from From to To and back (the contract's up-and-down pass); each direction is fitted on its own"><span className="label">Sweeps</span><input className="field figure" type="number" step="1" min="1" max="10000" required value={sweeps} onChange={(e) => setSweeps(e.target.value)} /></label>
        </div>
        <div className="rounded-md border border-warn/60 bg-sunken p-3 text-xs leading-relaxed" role="note" aria-label="Laser safety">
          <p className="font-semibold text-warn">Before you scan</p>
          <p className="text-ink">
            Wear eyewear rated for {bench.wavelengthNm} nm{bench.wavelengthNm > 700 ? ' (the beam is invisible or faint)' : ''}; keep beams enclosed, stopped and below eye
            level. Do not expose biased detectors to room light or let bright fringes overexpose them. Detector high voltage can be lethal: switch it off before
            handling cables. Your lab's laser safety officer and local rules decide what is allowed.
          </p>
        </div>
        <div className="flex flex-wrap items-center gap-2">
          <button type="submit" className="btn-primary" disabled={busy}>Start sweep</button>
          <span className="figure text-xs text-muted">≈ {Number.isFinite(estSeconds) ? estSeconds.toFixed(0) : '–'} s</span>
          <button type="button" className="btn-danger ml-auto" disabled={busy} onClick={() => void send({ op: 'stop' }, 'Stop')}>Stop drive</button>
        </div>
      </form>
      {/* A form, so an empty or out-of-range field is stopped by the browser: Number('') is 0 V. */}
      <form className="mt-3 flex flex-wrap items-end gap-2 border-t border-line pt-3" onSubmit={holdAt}>
        <label className="w-32"><span className="label">Hold at (V)</span><input className="field figure" type="number" step="any" required min={range.min} max={range.max} value={holdX} onChange={(e) => setHoldX(e.target.value)} /></label>
        <button type="submit" className="btn" disabled={busy}>Hold</button>
        <button
          type="button"
          className="btn"
          disabled={busy || mid === null}
          title={mid === null ? 'Needs a fitted pass over part of this range: a fit is not followed beyond the span it covered' : undefined}
          onClick={() => mid !== null && void send({ op: 'hold', x: Number(mid.toFixed(4)) }, `Hold at mid-fringe ${mid.toFixed(3)} V`)}
        >
          Hold at mid-fringe{mid !== null && <span className="figure text-xs text-muted">{mid.toFixed(3)} V</span>}
        </button>
      </form>
      <p className="mt-2 text-xs text-muted">
        Mid-fringe comes from the latest {held?.direction ?? lastSweep?.direction ?? ''} pass, the way the drive will approach it where a pass ran that way: piezo hysteresis moves the fringes with the direction of approach. Trim with the contrast readout (0 at mid-fringe).
      </p>
      {message && (
        <p className={`mt-2 text-sm ${message.ok ? 'text-good' : 'text-bad'}`} role="status" data-testid="drive-message">{message.text}</p>
      )}
    </section>
  );
}
