// The fitted sweeps of a history range: each pass's visibility with its ±1σ whisker on the same time
// axis as the count rates above, up and down passes apart (they differ by the piezo's hysteresis),
// and a summary per direction an operator can quote: how many, mean V and its scatter, the piezo
// calibration.
import { useEffect, useMemo, useRef, useState } from 'react';
import type uPlot from 'uplot';
import { fetchSweeps, sweepFit, type Sweep } from '../../lib/client/api.ts';
import { useFetched } from '../../lib/client/use-fetched.ts';
import { shownVisibility, visibilityBasis } from '../../lib/sweep-visibility.ts';
import { withAlpha } from '../../lib/client/chart-theme.ts';
import { formatClock, formatNumber, formatValueErr, PLUS_MINUS } from '../../lib/client/format.ts';
import { ChartState } from '../charts/ChartState.tsx';
import { errorBars } from '../charts/error-bars.ts';
import { axis, timeAxis, timeLegendValue, useUPlot } from '../charts/useUPlot.ts';

const HEIGHT = 220;

interface Props {
  benchId: string;
  from: number;
  to: number;
}

interface Summary {
  label: string;
  n: number;
  /** Mean of the fitted V with their sample standard deviation (the scatter from pass to pass). */
  v: { value: number; err: number } | null;
  /** Median of the fits' own 1σ: scatter well above it means the visibility moved. */
  medianErr: number | null;
  piezo: { value: number; err: number } | null;
  medianP: number | null;
}

function meanSd(xs: number[]): { value: number; err: number } | null {
  if (xs.length === 0) return null;
  const mean = xs.reduce((a, b) => a + b, 0) / xs.length;
  const sd = xs.length > 1 ? Math.sqrt(xs.reduce((a, b) => a + (b - mean) ** 2, 0) / (xs.length - 1)) : NaN;
  return { value: mean, err: sd };
}

/** Mean ± spread (to the spread's precision unless `decimals`), or the mean alone when one value gives no spread. */
function meanText(v: { value: number; err: number } | null, decimals?: number): string {
  if (!v) return '–';
  if (!Number.isFinite(v.err)) return v.value.toFixed(decimals ?? 3);
  // A spread that rounds to nothing at the fixed precision says "below the last digit", not "exactly 0".
  if (decimals !== undefined && v.err < 0.5 * 10 ** -decimals) return `${v.value.toFixed(decimals)}${PLUS_MINUS}<${(10 ** -decimals).toFixed(decimals)}`;
  return formatValueErr(v, decimals);
}

function median(xs: number[]): number | null {
  if (xs.length === 0) return null;
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m]! : (s[m - 1]! + s[m]!) / 2;
}

function summarise(label: string, list: Sweep[]): Summary {
  const fits = list.map(sweepFit);
  return {
    label,
    n: list.length,
    v: meanSd(list.map((s) => shownVisibility(s).value)),
    medianErr: median(list.map((s) => shownVisibility(s).err)),
    piezo: meanSd(fits.flatMap((f) => (f?.piezoNmPerV ? [f.piezoNmPerV.value] : []))),
    medianP: median(fits.flatMap((f) => (f?.quality ? [f.quality.pValue] : []))),
  };
}

/** One hovered sweep in words: when, which way, V, period, fit p-value and piezo calibration. */
function describe(s: Sweep): string {
  const f = sweepFit(s);
  const v = shownVisibility(s);
  const parts = [
    `${formatClock(s.start)}–${formatClock(s.end)}`,
    `${s.direction} pass`,
    `V ${v.net ? 'net' : 'raw'} ${formatValueErr(v)}`,
    `period ${formatNumber(s.periodX, 3)} V`,
    f?.quality ? `p = ${f.quality.pValue.toPrecision(2)}` : null,
    f?.piezoNmPerV ? `piezo ${formatValueErr(f.piezoNmPerV)} nm/V` : null,
  ];
  return parts.filter(Boolean).join(' · ');
}

/** One empty list for every render without data, so effects on `sweeps` do not rerun. */
const NO_SWEEPS: Sweep[] = [];

export function SweepHistory({ benchId, from, to }: Props) {
  const fetched = useFetched<Sweep[]>((signal) => fetchSweeps(benchId, from, to, signal), [benchId, from, to]);
  const sweeps = fetched.data ?? NO_SWEEPS;
  const { loading, error } = fetched;
  const [hover, setHover] = useState<number | null>(null);
  const box = useRef<HTMLDivElement>(null);
  const ref = useRef({ sweeps, from, to });
  ref.current = { sweeps, from, to };

  const data = (): uPlot.AlignedData => {
    const list = ref.current.sweeps;
    // One x per sweep (its middle): the up and down series are null where the other direction is.
    const shown = list.map(shownVisibility);
    return [list.map((s) => (s.start + s.end) / 2000), list.map((s, i) => (s.direction === 'up' ? shown[i]!.value : null)), list.map((s, i) => (s.direction === 'down' ? shown[i]!.value : null))];
  };
  const lo = (i: number) => { const s = ref.current.sweeps[i]; if (!s) return null; const v = shownVisibility(s); return v.value - v.err; };
  const hi = (i: number) => { const s = ref.current.sweeps[i]; if (!s) return null; const v = shownVisibility(s); return v.value + v.err; };

  const plot = useUPlot(
    box,
    (p) => ({
      legend: { show: true, live: false },
      cursor: { drag: { x: false, y: false }, points: { size: 9 } },
      scales: {
        x: { time: true, range: () => [ref.current.from / 1000, ref.current.to / 1000] },
        // The whiskers' extent with a margin, never above 1 where the visibility cannot be.
        y: {
          range: () => {
            const list = ref.current.sweeps;
            if (list.length === 0) return [0.8, 1];
            let min = Infinity;
            let max = -Infinity;
            for (const s of list) {
              const v = shownVisibility(s);
              min = Math.min(min, v.value - v.err);
              max = Math.max(max, v.value + v.err);
            }
            const pad = Math.max(0.002, (max - min) * 0.1);
            return [Math.max(0, min - pad), Math.min(1, max + pad)];
          },
        },
      },
      // Same axis width as the count-rate chart above, so the two time axes line up.
      axes: [timeAxis(p), axis(p, { size: 64, label: 'visibility' })],
      series: [
        { label: 'time', value: timeLegendValue },
        { label: 'up pass ± 1σ', stroke: p.accent, width: 0, points: { show: true, size: 6, fill: p.accent, stroke: p.accent } },
        // Hollow markers in the ink colour: apart from the up passes by shape as well as colour (ember and tide are the outputs').
        { label: 'down pass ± 1σ', stroke: p.ink, width: 0, points: { show: true, size: 7, width: 1.5, fill: p.panel, stroke: p.ink } },
      ],
      hooks: {
        draw: [errorBars(1, lo, hi, withAlpha(p.accent, 0.55)), errorBars(2, lo, hi, withAlpha(p.ink, 0.45))],
        setCursor: [(u: uPlot) => setHover(u.cursor.idx ?? null)],
      },
    }),
    data,
    HEIGHT,
  );

  // A new range: the hovered sweep of the old one means nothing.
  useEffect(() => setHover(null), [benchId, from, to]);

  useEffect(() => {
    plot.current?.setData(data());
  }, [sweeps]);

  const rows = useMemo(() => {
    const up = sweeps.filter((s) => s.direction === 'up');
    const down = sweeps.filter((s) => s.direction === 'down');
    return [summarise('up', up), summarise('down', down), summarise('all', sweeps)];
  }, [sweeps]);
  const hovered = hover !== null ? sweeps[hover] : undefined;
  const empty = !loading && !error && sweeps.length === 0;
  const basis = visibilityBasis(sweeps);

  return (
    <section className="card space-y-3" aria-labelledby="sweeps-h" data-testid="history-sweeps">
      <div className="flex flex-wrap items-baseline justify-between gap-2">
        <h2 id="sweeps-h" className="font-semibold">Visibility over time</h2>
        <p className="text-xs text-muted">each fitted pass in the range<span data-testid="sweeps-basis">{basis ? `, ${basis}` : ''}</span> · hover a point for its fit</p>
      </div>
      <div ref={box} className="relative" style={{ minHeight: HEIGHT }} role="img" aria-label="Fitted visibility of each pass in the range, up and down apart, with ±1σ whiskers">
        {(loading || error || empty) && (
          <ChartState error={!!error} testId="sweeps-state">
            {error ? `Could not load passes: ${error}` : loading ? 'Loading passes…' : 'No fitted passes in this range.'}
          </ChartState>
        )}
      </div>
      <p className="figure min-h-4 truncate text-xs text-muted" aria-live="polite">{hovered ? describe(hovered) : '\u00a0'}</p>
      {sweeps.length > 0 && (
        <div className="overflow-x-auto">
          <table className="table figure" aria-label="Fitted passes in the range by direction">
            <thead>
              <tr>
                <th scope="col">Direction</th>
                <th scope="col" className="text-right">Passes</th>
                <th scope="col" className="text-right">Mean V ± spread</th>
                <th scope="col" className="text-right">Median fit error</th>
                <th scope="col" className="text-right">Piezo nm/V ± spread</th>
                <th scope="col" className="text-right">Median fit p</th>
              </tr>
            </thead>
            <tbody>
              {rows.map((r) => (
                <tr key={r.label} className={r.label === 'all' ? 'font-medium' : ''}>
                  <th scope="row" className="text-left font-sans">{r.label}</th>
                  <td className="text-right">{r.n}</td>
                  <td className="text-right">{meanText(r.v, 4)}</td>
                  <td className="text-right">{formatNumber(r.medianErr, 4)}</td>
                  <td className="text-right">{meanText(r.piezo)}</td>
                  <td className="text-right">{r.medianP !== null ? r.medianP.toPrecision(2) : '–'}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
    </section>
  );
}
