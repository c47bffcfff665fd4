// A run's plots for its report: count rates over the run and the visibility of each fitted sweep.
import { useEffect, useRef, useState } from 'react';
import type uPlot from 'uplot';
import type { ViewChannel } from '../../lib/bench-view.ts';
import { errorText, fetchCounts, type CountsAnswer } from '../../lib/client/api.ts';
import { formatRateTick } from '../../lib/client/format.ts';
import { axis, timeAxis, useUPlot } from '../charts/useUPlot.ts';
import { channelColour } from '../bench/RatesChart.tsx';
import { pickStep } from '../history/history-range.ts';
import { VisibilityTrend } from '../bench/VisibilityTrend.tsx';
import type { Sweep } from '../../lib/client/api.ts';

/** Print width of the chart, px: A4 portrait at 96 dpi less margins. */
const POINTS = 700;

export default function RunCharts(props: { benchId: string; from: number; to: number; channels: ViewChannel[]; sweeps: Sweep[] }) {
  const { benchId, from, to, channels } = props;
  const [answer, setAnswer] = useState<CountsAnswer | null>(null);
  const [error, setError] = useState<string | null>(null);
  const box = useRef<HTMLDivElement>(null);
  const ref = useRef(answer);
  ref.current = answer;

  const data = (): uPlot.AlignedData => {
    const a = ref.current;
    if (!a) return [[], ...channels.map(() => [])];
    const n = Object.values(a.channels)[0]?.length ?? 0;
    const x = Array.from({ length: n }, (_, i) => (a.t0 + (i + 0.5) * a.step) / 1000);
    return [x, ...channels.map((c) => (a.channels[c.id] ?? []).map((v) => (v == null ? null : (v * 1000) / a.step)))];
  };

  const plot = useUPlot(
    box,
    (p) => ({
      legend: { show: true, live: false },
      scales: { x: { time: true } },
      axes: [timeAxis(p), axis(p, { size: 64, label: 'counts/s', values: (_u, t) => t.map(formatRateTick) })],
      series: [{ label: 'time' }, ...channels.map((c, i) => ({ label: c.label, stroke: channelColour(p, c.role, i), width: 1.25, points: { show: false } }))],
    }),
    data,
    240,
  );

  useEffect(() => {
    const ctl = new AbortController();
    fetchCounts(benchId, from, to, pickStep(to - from, POINTS), ctl.signal).then(
      (a) => {
        ref.current = a;
        setAnswer(a);
        plot.current?.setData(data());
      },
      (err) => !ctl.signal.aborted && setError(errorText(err)),
    );
    return () => ctl.abort();
  }, [benchId, from, to]);

  return (
    <div className="space-y-4">
      <section className="card break-inside-avoid" aria-labelledby="run-rates-h">
        <h2 id="run-rates-h" className="mb-2 font-semibold">Count rates during the run</h2>
        <div ref={box} className="relative min-h-[240px]" role="img" aria-label="Count rates over the run">
          {(!answer || error) && <p className={`pointer-events-none absolute left-1/2 top-[40%] z-10 -translate-x-1/2 -translate-y-1/2 rounded-md border border-line bg-panel px-3 py-1.5 text-center text-sm ${error ? 'text-bad' : 'text-muted'}`}>{error ? `Could not load counts: ${error}` : 'Loading…'}</p>}
        </div>
      </section>
      <div className="break-inside-avoid">
        <VisibilityTrend sweeps={props.sweeps} envelope={[]} limit={null} loading={false} error={null} emptyText="No sweeps were fitted during this run." />
      </div>
    </div>
  );
}
