// Counts against the scan coordinate: the kept passes of the current direction accumulate cell by
// cell (fringes emerge click by click at low rates), with the latest fits of that direction drawn
// over them, both outputs.
import { useEffect, useRef, useState } from 'react';
import type uPlot from 'uplot';
import { FrameGate } from '../../lib/client/frame-gate.ts';
import type { FringeCells } from '../../lib/client/fringe-cells.ts';
import { sweepFit, type Sweep } from '../../lib/client/api.ts';
import { withAlpha } from '../../lib/client/chart-theme.ts';
import { formatDuration, formatNumber, formatRateTick, formatValueErr } from '../../lib/client/format.ts';
import { useNow } from '../../lib/client/use-now.ts';
import { passWarnings, warningsLine } from '../../lib/pass-warnings.ts';
import { shownVisibility } from '../../lib/sweep-visibility.ts';
import { axis, useUPlot } from '../charts/useUPlot.ts';
import { CURVE_POINTS, fitRates } from './fringe-curve.ts';

/** Fringes change on the scale of a dwell step: 4 redraws per second follow them. */
const REDRAW_MS = 250;
export const KEEP_CHOICES = [1, 3, 10, 30] as const;

export interface FringeHandle {
  invalidate(): void;
}

interface Props {
  cells: FringeCells;
  /** Fitted sweeps, oldest first (the chart draws the newest of the current direction). */
  sweeps: Sweep[];
  labels: { a: string; b: string };
  onReady: (h: FringeHandle) => void;
  onClear: () => void;
}

/**
 * Fits of one direction only (up and down differ by the piezo's hysteresis), oldest first: the
 * kept passes' direction, or with no passes the newest fit's.
 */
function fitsShown(sweeps: Sweep[], direction: string | null): Sweep[] {
  const d = direction ?? sweeps.at(-1)?.direction;
  return sweeps.filter((s) => s.direction === d);
}

export function FringeChart(props: Props) {
  const { cells } = props;
  const box = useRef<HTMLDivElement>(null);
  const [keep, setKeep] = useState<number>(3);
  const [clicks, setClicks] = useState(0);
  const [dir, setDir] = useState<string | null>(null);
  const curve = useRef({ x: new Float64Array(CURVE_POINTS), a: new Float64Array(CURVE_POINTS), b: new Float64Array(CURVE_POINTS), pa: new Float64Array(CURVE_POINTS), pb: new Float64Array(CURVE_POINTS) });
  const sweepsRef = useRef(props.sweeps);
  sweepsRef.current = props.sweeps;

  // Data and fit curves share one x array: cell centres first, then the curve points, with nulls
  // where a series has no value (uPlot needs aligned, sorted x).
  const merged = useRef({ x: new Float64Array(0), cols: [] as (number | null)[][] });

  const data = (): uPlot.AlignedData => {
    const v = cells.view();
    const fits = fitsShown(sweepsRef.current, v.direction).slice(-2);
    const last = fits.at(-1);
    const prev = fits.length > 1 ? fits[0] : undefined;
    const c = curve.current;
    const lf = last ? sweepFit(last) : null;
    const pf = prev ? sweepFit(prev) : null;
    // Over the kept passes, or with none over the fits' own spans.
    const spans = [lf, pf].filter((f) => f?.xMin !== undefined && f.xMax !== undefined) as { xMin: number; xMax: number }[];
    const lo = v.x.length ? v.x[0]! : spans.length ? Math.min(...spans.map((f) => f.xMin)) : cells.xMin;
    const hi = v.x.length ? v.x[v.x.length - 1]! : spans.length ? Math.max(...spans.map((f) => f.xMax)) : cells.xMax;
    for (let i = 0; i < CURVE_POINTS; i++) c.x[i] = lo + ((hi - lo) * i) / (CURVE_POINTS - 1);
    if (lf) fitRates(lf, c.x, c.a, c.b);
    if (pf) fitRates(pf, c.x, c.pa, c.pb);
    // A fit is a model of the span its pass covered: beyond it the curve would be a guess drawn as fact.
    const inside = (f: typeof lf, x: number) => !f || f.xMin === undefined || f.xMax === undefined || (x >= f.xMin && x <= f.xMax);
    // Merge the two sorted x sets.
    const n = v.x.length + (lf || pf ? CURVE_POINTS : 0);
    const m = merged.current;
    if (m.x.length !== n) m.x = new Float64Array(n);
    const cols: (number | null)[][] = [0, 1, 2, 3, 4, 5].map((k) => (m.cols[k]?.length === n ? m.cols[k]! : new Array<number | null>(n)));
    let i = 0;
    let j = 0;
    const hasCurve = lf || pf;
    for (let k = 0; k < n; k++) {
      const takeData = i < v.x.length && (!hasCurve || j >= CURVE_POINTS || v.x[i]! <= c.x[j]!);
      if (takeData) {
        m.x[k] = v.x[i]!;
        cols[0]![k] = v.a[i]!;
        cols[1]![k] = v.b[i]!;
        cols[2]![k] = cols[3]![k] = cols[4]![k] = cols[5]![k] = null;
        i++;
      } else {
        m.x[k] = c.x[j]!;
        cols[0]![k] = cols[1]![k] = null;
        const lin = lf && inside(lf, c.x[j]!);
        const pin = pf && inside(pf, c.x[j]!);
        cols[2]![k] = lin ? c.a[j]! : null;
        cols[3]![k] = lin ? c.b[j]! : null;
        cols[4]![k] = pin ? c.pa[j]! : null;
        cols[5]![k] = pin ? c.pb[j]! : null;
        j++;
      }
    }
    m.cols = cols;
    return [m.x, ...cols];
  };

  const plot = useUPlot(
    box,
    (p) => ({
      legend: { show: true, live: false },
      cursor: { drag: { x: false, y: false }, points: { show: false } },
      scales: { x: { time: false }, y: { range: (_u, _min, max) => [0, max > 0 ? max * 1.08 : 1] } },
      axes: [axis(p, { label: 'scan coordinate (V)' }), axis(p, { size: 64, label: 'counts/s', values: (_u, t) => t.map(formatRateTick) })],
      series: [
        { label: 'x (V)' },
        { label: props.labels.a, stroke: p.ember, width: 0, points: { show: true, size: 4, fill: p.ember, stroke: p.ember }, spanGaps: false },
        { label: props.labels.b, stroke: p.tide, width: 0, points: { show: true, size: 4, fill: p.tide, stroke: p.tide }, spanGaps: false },
        // Both fits in ink over their coloured points; the legend's swatches look alike, so the labels say which line is which.
        { label: 'fit A (solid)', stroke: p.ink, width: 2, points: { show: false }, spanGaps: true },
        { label: 'fit B (dashed)', stroke: p.ink, width: 2, dash: [6, 4], points: { show: false }, spanGaps: true },
        { label: 'previous fit A', stroke: withAlpha(p.ember, 0.45), width: 1.5, points: { show: false }, spanGaps: true },
        { label: 'previous fit B', stroke: withAlpha(p.tide, 0.45), width: 1.5, points: { show: false }, spanGaps: true },
      ],
    }),
    data,
    300,
  );

  useEffect(() => {
    const gate = new FrameGate('fringe', REDRAW_MS, () => {
      plot.current?.batch(() => plot.current?.setData(data()));
      setClicks(cells.clicks());
      setDir(cells.shownDirection());
    });
    props.onReady({ invalidate: () => gate.invalidate() });
    return () => gate.stop();
  }, []);

  useEffect(() => {
    plot.current?.setData(data());
  }, [props.sweeps]);

  // The fit the curves show.
  const lastFit = fitsShown(props.sweeps, dir).at(-1);
  const now = useNow(5_000);
  // The calibration of the latest pass, labelled with its direction: up and down differ by the piezo's hysteresis.
  const piezo = lastFit ? sweepFit(lastFit)?.piezoNmPerV : null;
  const lastV = lastFit ? shownVisibility(lastFit) : null;
  const lastWarnings = lastFit ? passWarnings(lastFit.fit) : null;
  return (
    <section className="card" aria-labelledby="fringe-h">
      <div className="mb-2 flex flex-wrap items-center justify-between gap-2">
        {/* The text wraps beside the controls rather than pushing them onto a row of their own. */}
        <div className="min-w-0 flex-[1_1_16rem]">
          <h2 id="fringe-h" className="font-semibold">Fringes against the drive</h2>
          <p className="text-xs text-muted">
            {/* The clicks are those seen while this page is open; the fits may be of passes before it opened. */}
            {clicks > 0 || !lastFit ? (
              <>
                <span className="figure">{clicks.toLocaleString()}</span> clicks in the kept {dir ? `${dir}-going ` : ''}passes
              </>
            ) : (
              'fits of passes before this page opened; the clicks show from the next sweep'
            )}
          </p>
          {lastFit && lastV && (
            <p className="text-xs text-muted">
              {/* Each figure kept whole, so a narrow card breaks the line between them. */}
              {/* Without a significant fringe V ± σ measures no fringe: the value alone, with the warning. */}
              <span className="whitespace-nowrap">last fit <span className="figure" data-testid="last-fit-visibility">V = {lastWarnings?.noFringe ? formatNumber(lastV.value, 3) : formatValueErr(lastV)}</span> ({lastV.net ? 'net of darks' : 'raw'})</span>
              {lastWarnings && lastWarnings.all.length > 0 && <span className="whitespace-nowrap text-warn" title={lastWarnings.all.join('\n')} data-testid="last-fit-warning"> · {warningsLine(lastWarnings)}</span>}
              {/* Its age: an old fit over an idle bench must not pass for the fringes of now. */}
              {now !== null && <span className="whitespace-nowrap"> · <span className="figure">{formatDuration(now - lastFit.end)}</span> ago</span>}
              {piezo && (
                <>
                  {' · '}
                  <span className="whitespace-nowrap">piezo <span className="figure" data-testid="last-fit-piezo">{formatValueErr(piezo)} nm/V</span> ({lastFit.direction})</span>
                </>
              )}
            </p>
          )}
        </div>
        <div className="flex items-center gap-2">
          <label className="flex items-center gap-1.5 text-xs text-muted">
            Passes kept
            <select className="field !w-auto !py-1 text-xs" value={keep} onChange={(e) => { const k = Number(e.target.value); setKeep(k); cells.setKeep(k); }}>
              {KEEP_CHOICES.map((k) => (
                <option key={k} value={k}>{k}</option>
              ))}
            </select>
          </label>
          <button type="button" className="btn !py-1 text-xs" onClick={props.onClear}>Clear</button>
        </div>
      </div>
      <div ref={box} className="relative min-h-[300px]" role="img" aria-label="Counts of both outputs against the scan coordinate, with the fitted fringe model">
        {/* Over an empty plot only: the last fits stay drawn after a scan ends, and a note over them would hide them. */}
        {clicks === 0 && !lastFit && <p className="pointer-events-none absolute left-1/2 top-[40%] z-10 -translate-x-1/2 -translate-y-1/2 rounded-md border border-line bg-panel px-3 py-1.5 text-center text-sm text-muted">No scan in progress. Fringes appear here while the drive sweeps.</p>}
      </div>
    </section>
  );
}
