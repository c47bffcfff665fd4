// How steady a bench was over a range (the history's, or a run's in its report): the overlapping
// Allan deviation of each output's rate beside its white counting-noise floor √(R/τ), and of the
// phase beside its counting-noise floor (dark counts included) when the server can derive it, on log–log axes where white noise
// is a straight τ^(−1/2) line and drift turns the curve up. Both over the buckets where the drive
// held still.
import { useEffect, useMemo, useRef } from 'react';
import type uPlot from 'uplot';
import type { ViewChannel } from '../../lib/bench-view.ts';
import { fetchStability } from '../../lib/client/api.ts';
import { useFetched } from '../../lib/client/use-fetched.ts';
import { withAlpha, type ChartPalette } from '../../lib/client/chart-theme.ts';
import { formatRate, formatRateTick } from '../../lib/client/format.ts';
import { MIN_EDF } from '../../lib/analysis/allan.ts';
import { FRINGE_EXTREME_MARGIN } from '../../lib/analysis/phase.ts';
import { seriesLabel } from '../../lib/import-shapes.ts';
import type { FlooredPoint, Stability } from '../../lib/stability.ts';
import { ChartState } from '../charts/ChartState.tsx';
import { errorBars } from '../charts/error-bars.ts';
import { axis, useUPlot } from '../charts/useUPlot.ts';
import { channelColour } from '../bench/RatesChart.tsx';
import { stabilityStep } from '../../lib/time-steps.ts';

const HEIGHT = 260;

interface Curve {
  label: string;
  colour: (p: ChartPalette) => string;
  /** A reference line (dashed, no points or whiskers) rather than a measured curve. */
  floor?: boolean;
  /** `lo`–`hi`: the whisker, a 68% χ² interval. */
  points: { tau: number; y: number; lo?: number; hi?: number }[];
}

/** τ in s as a tick on the decade grid: "0.1", "1", "100", "1000", "10 k" (minutes would break the decades). */
function tauTick(t: number): string {
  return t >= 10_000 ? `${Number((t / 1000).toPrecision(3))} k` : String(Number(t.toPrecision(3)));
}

/** One log–log Allan chart: the curves on a shared τ axis (the union of their τ). */
function AllanChart(props: { curves: Curve[]; yLabel: string; yTick: (v: number) => string; yValue: (v: number | null) => string; label: string; testId: string }) {
  const box = useRef<HTMLDivElement>(null);
  const ref = useRef(props.curves);
  ref.current = props.curves;

  const taus = (): number[] => [...new Set(ref.current.flatMap((c) => c.points.map((p) => p.tau)))].sort((a, b) => a - b);
  const data = (): uPlot.AlignedData => {
    const x = taus();
    // Zero has no place on a log axis: such points are left out (null), not drawn at the floor.
    const ys = ref.current.map((c) => {
      const at = new Map(c.points.map((p) => [p.tau, p.y]));
      return x.map((t) => { const v = at.get(t); return v != null && v > 0 ? v : null; });
    });
    return [x, ...ys];
  };
  const whisker = (c: number, end: 'lo' | 'hi') => (i: number) => {
    const t = taus()[i];
    return ref.current[c]?.points.find((p) => p.tau === t)?.[end] ?? null;
  };

  const plot = useUPlot(
    box,
    (p) => ({
      legend: { show: true, live: true },
      cursor: { drag: { x: false, y: false } },
      scales: { x: { time: false, distr: 3, log: 10 }, y: { distr: 3, log: 10 } },
      // On log axes uPlot thins crowded labels by handing null ticks (despite its types): left blank.
      axes: [
        axis(p, { label: 'averaging time τ (s)', values: (_u, t) => t.map((v: number | null) => (v == null ? '' : tauTick(v))) }),
        axis(p, { size: 64, label: props.yLabel, values: (_u, t) => t.map((v: number | null) => (v == null ? '' : props.yTick(v))) }),
      ],
      series: [
        { label: 'τ', value: (_u: uPlot, v: number | null) => (v == null ? '–' : `${tauTick(v)} s`) },
        ...ref.current.map((c) => ({
          label: c.label,
          stroke: c.floor ? withAlpha(c.colour(p), 0.75) : c.colour(p),
          width: c.floor ? 1.25 : 1.75,
          ...(c.floor ? { dash: [6, 4], points: { show: false } } : { points: { show: true, size: 5, fill: c.colour(p) } }),
          spanGaps: true,
          value: (_u: uPlot, v: number | null) => props.yValue(v),
        })),
      ],
      hooks: { draw: ref.current.flatMap((c, i) => (c.floor ? [] : [errorBars(i + 1, whisker(i, 'lo'), whisker(i, 'hi'), withAlpha(c.colour(p), 0.6))])) },
    }),
    data,
    HEIGHT,
    // The set of curves shapes the options: rebuild when it changes.
    props.curves.map((c) => c.label).join('|'),
  );

  useEffect(() => {
    plot.current?.setData(data());
  }, [props.curves]);

  return <div ref={box} className="relative" style={{ minHeight: HEIGHT }} role="img" aria-label={props.label} data-testid={props.testId} />;
}

function measured(points: FlooredPoint[]): Curve['points'] {
  return points.map((p) => ({ tau: p.tau, y: p.adev, lo: p.lo, hi: p.hi }));
}

function floor(points: FlooredPoint[]): Curve['points'] {
  return points.map((p) => ({ tau: p.tau, y: p.poissonLimit }));
}

/** "1,234 buckets in 3 stretches". */
function buckets(n: number, stretches: number): string {
  return `${n.toLocaleString('en')} buckets in ${stretches} ${stretches === 1 ? 'stretch' : 'stretches'}`;
}

/** What the rate curves cover: one line when the outputs share their held buckets, else one per output. */
function rateCover(outputs: Stability['rates'], channels: ViewChannel[]): string {
  const texts = outputs.map((r) => buckets(r.buckets, r.stretches));
  if (texts.every((t) => t === texts[0])) return texts[0] ?? '';
  return outputs.map((r, i) => `${channels.find((c) => c.id === r.channel)?.label ?? r.channel} ${texts[i]}`).join('; ');
}

/** The history's stability card: reads the range's stability and draws it. */
export function StabilityCard({ benchId, channels, from, to }: { benchId: string; channels: ViewChannel[]; from: number; to: number }) {
  const step = stabilityStep(to - from);
  const { data, loading, error } = useFetched<Stability>((signal) => fetchStability(benchId, from, to, step, signal), [benchId, from, to, step]);
  return <StabilityView answer={data} loading={loading} error={error} channels={channels} title="Stability" />;
}

/**
 * A stability answer as a card of two Allan charts (the output rates, the phase) with what they
 * cover. `title` heads the card; the run report passes the answer it computed for the run.
 */
export function StabilityView(props: { answer: Stability | null; loading: boolean; error: string | null; channels: ViewChannel[]; title: string }) {
  const { answer, loading, error, channels } = props;
  const step = answer ? answer.tau0 * 1000 : null;
  // The two outputs only: their floors are what the interferometer's counting noise is judged by.
  const outputs = useMemo(() => (answer?.rates ?? []).filter((r) => r.role === 'out_a' || r.role === 'out_b'), [answer]);
  const rateCurves = useMemo((): Curve[] => outputs.flatMap((r, i): Curve[] => {
    const c = channels.find((ch) => ch.id === r.channel);
    const label = c ? seriesLabel(c) : r.channel;
    const colour = (p: ChartPalette) => channelColour(p, r.role as ViewChannel['role'], i);
    return [
      { label: r.covers === 'whole' ? `${label}, sweeps included` : label, colour, points: measured(r.points) },
      { label: `${label} floor √(R/τ)${r.deadTime ? '·(1 − Rτ_d)' : ''}`, colour, floor: true, points: floor(r.points) },
    ];
  }), [outputs, channels]);
  const phase = answer?.phase ?? null;
  const phaseCurves = useMemo((): Curve[] => (phase ? [
    { label: 'phase', colour: (p) => p.accent, points: measured(phase.points) },
    { label: 'floor, darks included', colour: (p) => p.accent, floor: true, points: floor(phase.points) },
  ] : []), [phase]);
  const empty = !loading && !error && outputs.length === 0;
  const whole = outputs.some((r) => r.covers === 'whole');

  return (
    <section className="card space-y-3" aria-labelledby="stab-h" data-testid="history-stability">
      <div>
        <div className="flex flex-wrap items-baseline justify-between gap-2">
          <h2 id="stab-h" className="font-semibold">{props.title}</h2>
          <p className="figure text-xs text-muted">
            overlapping Allan deviation · τ₀ {step === null ? '–' : step >= 1000 ? `${step / 1000} s` : `${step} ms`}
            {answer && answer.missingBuckets > 0 && ` · ${answer.missingBuckets} buckets without a whole τ₀ of data: series split there`}
          </p>
        </div>
        <p className="mt-1 text-sm text-muted">
          Only the buckets where the drive held still count, for the rates as for the phase: a sweep or a move to another hold runs the rates over the fringe's whole depth. White counting noise falls as τ<sup>−½</sup> along each dashed floor; where a curve leaves its floor at long τ, something changed during a hold: the phase drifting (at mid-fringe the rates follow it), alignment or source power.
        </p>
        <p className="mt-1 text-xs text-muted" data-testid="stability-bars">
          Bars: 68% χ² interval from the equivalent degrees of freedom for white noise (narrower than the truth where drift dominates). Averaging times with fewer than {MIN_EDF} degrees of freedom are left out, among them half the range, which rests on a single independent difference.
        </p>
      </div>
      <div className="grid gap-4 xl:grid-cols-2">
        <div>
          <h3 className="mb-1 text-sm font-medium">
            Output rates
            {outputs.length > 0 && (
              <span className="figure font-normal text-muted" data-testid="stability-rates-cover">
                {' '}· {whole ? 'no raw bins left to tell the holds: the whole range, sweeps included' : `drive held still: ${rateCover(outputs, channels)}`}
              </span>
            )}
          </h3>
          <div className="relative">
            <AllanChart curves={rateCurves} yLabel="σ(τ), counts/s" yTick={formatRateTick} yValue={formatRate} label="Allan deviation of each output's rate against averaging time, with its shot-noise floor" testId="stability-rates-chart" />
            {(loading || error || empty) && (
              <ChartState error={!!error} testId="stability-state">
                {error ? `Could not load stability: ${error}` : loading ? 'Loading…' : 'No output held still long enough in this range for a stability curve.'}
              </ChartState>
            )}
          </div>
        </div>
        <div>
          <h3 className="mb-1 text-sm font-medium">
            Phase
            {phase && (
              <span className="figure font-normal text-muted">
                {' '}· scaled by V = {phase.visibility.toFixed(3)} ({phase.net ? 'net of darks' : 'raw'}) · drive held still: {buckets(phase.heldBuckets, phase.stretches)}
              </span>
            )}
          </h3>
          {phase ? (
            <AllanChart curves={phaseCurves} yLabel="σ(τ), rad" yTick={(v) => String(Number(v.toPrecision(2)))} yValue={(v) => (v == null ? '–' : `${v.toPrecision(3)} rad`)} label="Allan deviation of the interferometer phase against averaging time, with its counting-noise floor" testId="stability-phase-chart" />
          ) : (
            <p className="text-sm text-muted">{loading || error ? '–' : 'No phase for this range: it needs both outputs, a fitted pass for the visibility and the drive held still long enough.'}</p>
          )}
          {phase && <p className="mt-1 text-xs text-muted" data-testid="stability-phase-floor">Floor: the least noise counting alone leaves in a phase read from each bucket's two outputs at its phase (the Cramér–Rao bound), dark counts included: 1/(V√N) for N signal counts at mid-fringe without darks, higher away from it and with darks. Buckets within {FRINGE_EXTREME_MARGIN} rad of the fringe's top or bottom, where the phase cannot be read and the floor grows without limit, are left out of both curves. The shot-noise limit 1/√N of the signal lies lower still.</p>}
        </div>
      </div>
    </section>
  );
}
