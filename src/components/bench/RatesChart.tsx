// Live rates of every channel over a chosen window (10 s – 10 min), linear or log, fed from a
// typed ring buffer; redraws coalesced to at most 10 per second.
import { useEffect, useRef, useState } from 'react';
import type uPlot from 'uplot';
import { FrameGate } from '../../lib/client/frame-gate.ts';
import type { RateRing } from '../../lib/client/rate-ring.ts';
import type { ViewChannel } from '../../lib/bench-view.ts';
import { axis, timeAxis, timeLegendValue, useUPlot } from '../charts/useUPlot.ts';
import type { ChartPalette } from '../../lib/client/chart-theme.ts';
import { formatRate, formatRateTick } from '../../lib/client/format.ts';

export const WINDOWS_S = [10, 30, 60, 180, 600] as const;
/** Smallest rate drawn on the log axis, counts/s: zero has no logarithm. */
const LOG_FLOOR = 1;
/** Scrolling looks smooth at 10–12 redraws per second (80 ms plus frame alignment); more costs script time for nothing. */
const REDRAW_MS = 80;

export function channelColour(p: ChartPalette, role: ViewChannel['role'], i: number): string {
  if (role === 'out_a') return p.ember;
  if (role === 'out_b') return p.tide;
  if (role === 'herald') return p.herald;
  return [p.accent, p.muted][i % 2]!;
}

const hasHerald = (channels: Pick<ViewChannel, 'role'>[]) => channels.some((c) => c.role === 'herald');

/**
 * The y axes of a rates chart. A herald runs 5–10× above the gated outputs: on the outputs' axis it
 * would flatten them, so it gets its own axis on the right (its series use `heraldScale`).
 */
export function rateAxes(p: ChartPalette, channels: Pick<ViewChannel, 'role'>[]): uPlot.Axis[] {
  const ticks = (_u: uPlot, t: number[]) => t.map(formatRateTick);
  return [
    axis(p, { size: 64, label: 'counts/s', values: ticks }),
    ...(hasHerald(channels) ? [axis(p, { scale: 'herald', side: 1, size: 64, label: 'herald counts/s', grid: { show: false }, values: ticks })] : []),
  ];
}

/**
 * Linear rate scales from zero, the herald's too: left to autoscale, a steady herald's axis spanned
 * its shot noise alone (199–201 k, the labels repeating) and drew it as wild swings.
 */
export function rateScales(channels: Pick<ViewChannel, 'role'>[]): Record<string, uPlot.Scale> {
  const fromZero = (): uPlot.Scale => ({ range: (_u, _min, max) => [0, max > 0 ? max * 1.08 : 1] });
  return { y: fromZero(), ...(hasHerald(channels) ? { herald: fromZero() } : {}) };
}

/** The scale a channel's series is drawn on (see rateAxes). */
export const heraldScale = (c: Pick<ViewChannel, 'role'>): { scale?: string } => (c.role === 'herald' ? { scale: 'herald' } : {});

export interface RatesHandle {
  invalidate(): void;
}

export function RatesChart(props: { ring: RateRing; channels: ViewChannel[]; onReady: (h: RatesHandle) => void; hasData: boolean; error: string | null }) {
  const { ring, channels } = props;
  const [windowS, setWindowS] = useState<number>(60);
  const [log, setLog] = useState(false);
  const box = useRef<HTMLDivElement>(null);
  const settings = useRef({ windowS, log });
  settings.current = { windowS, log };

  const data = (): uPlot.AlignedData => {
    const now = Date.now();
    const v = ring.view(now - settings.current.windowS * 1000, settings.current.log ? LOG_FLOOR : 0);
    return [v.x, ...v.y];
  };


  const plot = useUPlot(
    box,
    (p) => ({
      legend: { show: true, live: true },
      cursor: { drag: { x: false, y: false } },
      scales: {
        x: { time: true, range: () => { const now = Date.now() / 1000; return [now - settings.current.windowS, now]; } },
        ...(log ? { y: { distr: 3, log: 10 }, ...(hasHerald(channels) ? { herald: { distr: 3, log: 10 } } : {}) } : rateScales(channels)),
      },
      axes: [
        timeAxis(p),
        ...rateAxes(p, channels),
      ],
      series: [
        { label: 'time', value: timeLegendValue },
        ...channels.map((c, i) => ({
          label: c.label,
          stroke: channelColour(p, c.role, i),
          width: 1.5,
          points: { show: false },
          value: (_u: uPlot, v: number | null) => formatRate(v),
          ...heraldScale(c),
        })),
      ],
    }),
    data,
    260,
    `${log}`,
  );

  useEffect(() => {
    // batch(): uPlot commits synchronously at its end, so the performance measure covers the drawing.
    const gate = new FrameGate('rates', REDRAW_MS, () => plot.current?.batch(() => plot.current?.setData(data())));
    props.onReady({ invalidate: () => gate.invalidate() });
    // Keep scrolling while the bench is quiet, so a stalled feed is visible as a stopped trace.
    const tick = setInterval(() => gate.invalidate(), 500);
    return () => {
      clearInterval(tick);
      gate.stop();
    };
  }, []);

  useEffect(() => {
    plot.current?.setData(data());
  }, [windowS, log]);

  return (
    <section className="card" aria-labelledby="rates-h">
      <div className="mb-2 flex flex-wrap items-center justify-between gap-2">
        <h2 id="rates-h" className="font-semibold">Live rates</h2>
        <div className="flex flex-wrap items-center gap-2">
          <div role="group" aria-label="Time window" className="flex overflow-hidden rounded-md border border-line">
            {WINDOWS_S.map((w) => (
              <button key={w} type="button" aria-pressed={w === windowS} onClick={() => setWindowS(w)} className={`figure px-2.5 py-1 text-xs ${w === windowS ? 'bg-accent text-accent-ink' : 'hover:bg-sunken'}`}>
                {w < 60 ? `${w} s` : `${w / 60} min`}
              </button>
            ))}
          </div>
          <button type="button" className="btn !py-1 text-xs" aria-pressed={log} onClick={() => setLog(!log)}>
            {log ? 'Log axis' : 'Linear axis'}
          </button>
        </div>
      </div>
      <div ref={box} className="relative min-h-[260px]" role="img" aria-label={`Count rates of ${channels.map((c) => c.label).join(', ')} over the last ${windowS} s`}>
        {!props.hasData && !props.error && <p className="pointer-events-none absolute left-1/2 top-[40%] z-10 -translate-x-1/2 -translate-y-1/2 rounded-md border border-line bg-panel px-3 py-1.5 text-center text-sm text-muted">Waiting for counts…</p>}
        {props.error && <p className="pointer-events-none absolute left-1/2 top-[40%] z-10 -translate-x-1/2 -translate-y-1/2 rounded-md border border-line bg-panel px-3 py-1.5 text-center text-sm text-bad">{props.error}</p>}
      </div>
    </section>
  );
}
