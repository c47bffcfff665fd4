// Visibility over the last half hour: each fitted sweep with its 1σ band (net of darks where they
// are calibrated, as the live tile and the alarm take it), the running (envelope) estimate between
// sweeps, and the alarm limit as a line.
import { useEffect, useRef } from 'react';
import type uPlot from 'uplot';
import type { Sweep } from '../../lib/client/api.ts';
import { shownVisibility, visibilityBasis } from '../../lib/sweep-visibility.ts';
import { withAlpha } from '../../lib/client/chart-theme.ts';
import { axis, timeAxis, useUPlot } from '../charts/useUPlot.ts';
import { useNow } from '../../lib/client/use-now.ts';
import { trendXRange, trendYRange, trendYSplits, trendYTicks } from './visibility-axes.ts';

/** The pass line breaks where passes stop for longer than this or five usual spacings, s. */
const TREND_GAP_MIN_S = 120;

export interface EnvelopePoint {
  /** ms since the epoch */
  t: number;
  v: number;
}

interface Props {
  sweeps: Sweep[];
  envelope: EnvelopePoint[];
  limit: number | null;
  loading: boolean;
  error: string | null;
  /** Said when there is nothing to draw (the live view and a run report mean different spans). */
  emptyText?: string;
  /**
   * The time axis, ms: a run report's own span; null's end is now (the live view), so an old
   * visibility is seen to be old. Without it the axis fits the points.
   */
  span?: { from: number | null; to: number | null };
  /** The live view's window, ms: with no pass to draw, the axis spans it up to now and the message names it. */
  windowMs?: number;
}

export function VisibilityTrend(props: Props) {
  const box = useRef<HTMLDivElement>(null);
  const ref = useRef(props);
  ref.current = props;

  const hasEnvelope = props.envelope.length > 0;
  const hasLimit = props.limit !== null;

  const data = (): uPlot.AlignedData => {
    const { sweeps, envelope, limit } = ref.current;
    // Sweeps and envelope points on one sorted time axis: `undefined` where a series has no value
    // at a time (uPlot draws through it), an explicit null where the passes stop for a while (uPlot
    // breaks the line there, so a quiet hour is not drawn as a trend).
    type Cell = number | null | undefined;
    const rows: [number, Cell, Cell, Cell, Cell][] = [];
    const times = sweeps.map((s) => (s.start + s.end) / 2000).sort((a, b) => a - b);
    const steps = times.slice(1).map((t, i) => t - (times[i] as number)).sort((a, b) => a - b);
    const gap = Math.max(TREND_GAP_MIN_S, 5 * (steps[steps.length >> 1] ?? 0));
    for (let i = 1; i < times.length; i++) {
      const [t0, t1] = [times[i - 1] as number, times[i] as number];
      if (t1 - t0 > gap) rows.push([(t0 + t1) / 2, null, null, null, undefined]);
    }
    for (const s of sweeps) {
      const t = (s.start + s.end) / 2000;
      const v = shownVisibility(s);
      rows.push([t, v.value, v.value - v.err, v.value + v.err, undefined]);
    }
    for (const e of envelope) rows.push([e.t / 1000, undefined, undefined, undefined, e.v]);
    rows.sort((a, b) => a[0] - b[0]);
    const x = rows.map((r) => r[0]);
    const lim = rows.map(() => limit);
    return [x, rows.map((r) => r[1]), rows.map((r) => r[2]), rows.map((r) => r[3]), rows.map((r) => r[4]), lim];
  };

  const plot = useUPlot(
    box,
    (p) => ({
      legend: { show: true, live: false },
      cursor: { drag: { x: false, y: false } },
      scales: {
        x: { time: true, range: (_u, dataMin, dataMax) => trendXRange(ref.current.span, dataMin, dataMax, Date.now() / 1000, ref.current.windowMs && ref.current.windowMs / 1000) },
        y: { range: (_u, min, max) => trendYRange(min, max, ref.current.limit) },
      },
      axes: [timeAxis(p), axis(p, { size: 56, label: 'visibility', splits: (_u, _i, min, max, step) => trendYSplits(min, max, step), values: (_u, ticks, _i, _space, step) => trendYTicks(ticks, step) })],
      bands: [{ series: [3, 2], fill: withAlpha(p.accent, 0.18) }],
      series: [
        { label: 'time' },
        { label: 'pass fit ± 1σ', stroke: p.accent, width: 1.5, points: { show: true, size: 5, fill: p.accent } },
        // The band's edges: drawn as the shaded band only, so kept out of the legend ('hidden!' beats uPlot's unlayered legend CSS).
        { label: '−1σ', class: 'hidden!', stroke: 'transparent', points: { show: false } },
        { label: '+1σ', class: 'hidden!', stroke: 'transparent', points: { show: false } },
        // In the legend only when drawn: an entry for a line that is not there reads as a missing line.
        { label: 'fringe envelope', ...(hasEnvelope ? {} : { class: 'hidden!' }), stroke: p.muted, width: 1, dash: [3, 3], points: { show: false }, spanGaps: true },
        { label: 'alarm limit', ...(hasLimit ? {} : { class: 'hidden!' }), stroke: p.bad, width: 1.5, dash: [8, 4], points: { show: false }, spanGaps: true },
      ],
    }),
    data,
    200,
    `${hasEnvelope}/${hasLimit}`,
  );

  // An axis that ends now moves with the clock, not only when a fit arrives (an idle bench).
  const tick = useNow(props.span?.to === null ? 5_000 : undefined);
  useEffect(() => {
    plot.current?.setData(data());
  }, [props.sweeps, props.envelope, props.limit, tick]);

  const empty = props.sweeps.length === 0 && props.envelope.length === 0;
  const basis = visibilityBasis(props.sweeps);
  return (
    <section className="card" aria-labelledby="vis-h">
      <div className="mb-2 flex items-baseline justify-between gap-2">
        <h2 id="vis-h" className="font-semibold">Visibility trend</h2>
        <p className="text-xs text-muted">
          {basis && <span data-testid="trend-basis">passes {basis} · </span>}
          {props.limit !== null ? (
            <>alarm below <span className="figure">{props.limit.toFixed(3)}</span></>
          ) : (
            'no visibility alarm set'
          )}
        </p>
      </div>
      <div ref={box} className="relative min-h-[200px]" role="img" aria-label="Visibility of each fitted pass over time, with the alarm limit">
        {(props.loading || props.error || empty) && (
          <p className={`pointer-events-none absolute left-1/2 top-[40%] z-10 -translate-x-1/2 -translate-y-1/2 rounded-md border border-line bg-panel px-3 py-1.5 text-center text-sm ${props.error ? 'text-bad' : 'text-muted'}`}>
            {props.error ?? (props.loading ? 'Loading passes…' : (props.emptyText ?? (props.windowMs ? `No fitted passes in the last ${Math.round(props.windowMs / 60_000)} minutes.` : 'No fitted passes.')))}
          </p>
        )}
      </div>
    </section>
  );
}
