// How steady a bench was over the history range: the overlapping Allan deviation of each output's
// rate beside its white counting-noise floor √(R/τ), and of the phase when the server can derive
// it, on log–log axes where white noise is a straight τ^(−1/2) line and drift turns the curve up.
import { useEffect, useMemo, useRef } from 'react';
import type uPlot from 'uplot';
import type { ViewChannel } from '../../lib/bench-view.ts';
import { fetchStability } from '../../lib/client/api.ts';
import { useFetched } from '../../lib/client/use-fetched.ts';
import { withAlpha, type ChartPalette } from '../../lib/client/chart-theme.ts';
import { formatRate, formatRateTick } from '../../lib/client/format.ts';
import { MIN_EDF, type AllanPoint } from '../../lib/analysis/allan.ts';
import type { Stability } from '../../lib/stability.ts';
import { ChartState } from '../charts/ChartState.tsx';
import { errorBars } from '../charts/error-bars.ts';
import { axis, useUPlot } from '../charts/useUPlot.ts';
import { channelColour } from '../bench/RatesChart.tsx';
import { stabilityStep } from './history-range.ts';

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

function measured(points: AllanPoint[]): Curve['points'] {
  return points.map((p) => ({ tau: p.tau, y: p.adev, lo: p.lo, hi: p.hi }));
}

export function StabilityCard({ benchId, channels, from, to }: { benchId: string; channels: ViewChannel[]; from: number; to: number }) {
  const step = stabilityStep(to - from);
  const { data: answer, loading, error } = useFetched<Stability>((signal) => fetchStability(benchId, from, to, step, signal), [benchId, from, to, step]);

  // The two outputs only: their floors are what the interferometer's counting noise is judged by.
  const outputs = useMemo(() => (answer?.rates ?? []).filter((r) => r.role === 'out_a' || r.role === 'out_b'), [answer]);
  const rateCurves = useMemo((): Curve[] => outputs.flatMap((r, i): Curve[] => {
    const label = channels.find((c) => c.id === r.channel)?.label ?? r.channel;
    const colour = (p: ChartPalette) => channelColour(p, r.role as ViewChannel['role'], i);
    return [
      { label, colour, points: measured(r.points) },
      { label: `${label} floor √(R/τ)`, colour, floor: true, points: r.points.map((p) => ({ tau: p.tau, y: p.poissonLimit })) },
    ];
  }), [outputs, channels]);
  const phase = answer?.phase ?? null;
  const phaseCurves = useMemo((): Curve[] => (phase ? [{ label: 'phase', colour: (p) => p.accent, points: measured(phase.points) }] : []), [phase]);
  const empty = !loading && !error && outputs.length === 0;

  return (
    <section className="card space-y-3" aria-labelledby="stab-h" data-testid="history-stability">
      <div>
        <div className="flex flex-wrap items-baseline justify-between gap-2">
          <h2 id="stab-h" className="font-semibold">Stability</h2>
          <p className="figure text-xs text-muted">
            overlapping Allan deviation · τ₀ {step >= 1000 ? `${step / 1000} s` : `${step} ms`}
            {answer && answer.missingBuckets > 0 && ` · ${answer.missingBuckets} buckets without a whole τ₀ of data: series split there`}
          </p>
        </div>
        <p className="mt-1 text-sm text-muted">
          White counting noise falls as τ<sup>−½</sup> along the dashed floor √(R/τ); where a curve leaves the floor and turns up at long τ, the bench drifted (alignment, temperature, source power).
        </p>
        <p className="mt-1 text-xs text-muted" data-testid="stability-bars">
          Bars: 68% χ² interval from the equivalent degrees of freedom for white noise (narrower than the truth where drift dominates). Averaging times with fewer than {MIN_EDF} degrees of freedom are left out, among them half the range, which rests on a single independent difference.
        </p>
      </div>
      <div className="grid gap-4 xl:grid-cols-2">
        <div>
          <h3 className="mb-1 text-sm font-medium">Output rates</h3>
          <div className="relative">
            <AllanChart curves={rateCurves} yLabel="σ(τ), counts/s" yTick={formatRateTick} yValue={formatRate} label="Allan deviation of each output's rate against averaging time, with its shot-noise floor" testId="stability-rates-chart" />
            {(loading || error || empty) && (
              <ChartState error={!!error} testId="stability-state">
                {error ? `Could not load stability: ${error}` : loading ? 'Loading…' : 'Too few counts in this range for a stability curve.'}
              </ChartState>
            )}
          </div>
        </div>
        <div>
          <h3 className="mb-1 text-sm font-medium">
            Phase
            {phase && (
              <span className="figure font-normal text-muted">
                {' '}· scaled by V = {phase.visibility.toFixed(3)} ({phase.net ? 'net of darks' : 'raw'}) · {phase.heldBuckets} buckets with the drive held still, in {phase.stretches} {phase.stretches === 1 ? 'stretch' : 'stretches'}
              </span>
            )}
          </h3>
          {phase ? (
            <AllanChart curves={phaseCurves} yLabel="σ(τ), rad" yTick={(v) => String(Number(v.toPrecision(2)))} yValue={(v) => (v == null ? '–' : `${v.toPrecision(3)} rad`)} label="Allan deviation of the interferometer phase against averaging time" testId="stability-phase-chart" />
          ) : (
            <p className="text-sm text-muted">{loading || error ? '–' : 'No phase for this range: it needs both outputs, a fitted pass for the visibility and the drive held still long enough.'}</p>
          )}
        </div>
      </div>
    </section>
  );
}
