// A run's plots for its report: count rates over the run and the visibility of each fitted sweep.
import { useEffect, useRef, useState } from 'react';
import type uPlot from 'uplot';
import type { ViewChannel } from '../../lib/bench-view.ts';
import { errorText, fetchCounts, type CountsAnswer } from '../../lib/client/api.ts';
import { timeAxis, useUPlot } from '../charts/useUPlot.ts';
import { channelColour, heraldScale, rateAxes, rateScales } from '../bench/RatesChart.tsx';
import { channelRates, wholeBuckets } from '../history/history-range.ts';
import { pickStep } from '../../lib/time-steps.ts';
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
  /** When the answer arrived: a running run's last bucket may still have been filling then. */
  const fetchedAt = useRef(0);

  const data = (): uPlot.AlignedData => {
    const a = ref.current;
    if (!a) return [[], ...channels.map(() => [])];
    const n = Object.values(a.channels)[0]?.length ?? 0;
    const x = Array.from({ length: n }, (_, i) => (a.t0 + (i + 0.5) * a.step) / 1000);
    return [x, ...channels.map((c) => channelRates(a, c.id, fetchedAt.current))];
  };

  const plot = useUPlot(
    box,
    (p) => ({
      legend: { show: true, live: false },
      scales: { x: { time: true }, ...rateScales(channels) },
      axes: [timeAxis(p), ...rateAxes(p, channels)],
      series: [{ label: 'time' }, ...channels.map((c, i) => ({ label: c.label, stroke: channelColour(p, c.role, i), width: 1.25, points: { show: false }, ...heraldScale(c) }))],
    }),
    data,
    240,
  );

  useEffect(() => {
    const ctl = new AbortController();
    const step = pickStep(to - from, POINTS);
    const whole = wholeBuckets(from, to, step);
    fetchCounts(benchId, whole.from, whole.to, step, ctl.signal).then(
      (a) => {
        fetchedAt.current = Date.now();
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
        <VisibilityTrend sweeps={props.sweeps} envelope={[]} limit={null} loading={false} error={null} emptyText="No passes were fitted during this run." span={{ from: props.from, to: props.to }} />
      </div>
    </div>
  );
}
