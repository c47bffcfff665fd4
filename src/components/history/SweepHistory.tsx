// The fitted sweeps of a history range: each pass's visibility with its ±1σ whisker on the same time
// axis as the count rates above, up and down passes apart (they differ by the piezo's hysteresis),
// and a summary per direction an operator can quote: how many, mean V and its scatter, the piezo
// calibration, how many carry fit warnings; then the passes with warnings, one line each. A pass
// without a significant fringe is drawn apart, muted and without a whisker, and left out of the
// mean V and the median fit error: its V ± σ measures no fringe.
import { useEffect, useMemo, useRef, useState } from 'react';
import type uPlot from 'uplot';
import { fetchSweeps, sweepFit, type Sweep } from '../../lib/client/api.ts';
import { useFetched } from '../../lib/client/use-fetched.ts';
import { shownVisibility, visibilityBasis } from '../../lib/sweep-visibility.ts';
import { withAlpha } from '../../lib/client/chart-theme.ts';
import { formatClock, formatNumber, formatValueErr, PLUS_MINUS } from '../../lib/client/format.ts';
import { FIT_WARNING } from '../../lib/analysis/fit-warnings.ts';
import { passWarnings, warningsLine } from '../../lib/pass-warnings.ts';
import { ChartState } from '../charts/ChartState.tsx';
import { errorBars } from '../charts/error-bars.ts';
import { axis, timeAxis, timeLegendValue, useUPlot } from '../charts/useUPlot.ts';

const HEIGHT = 220;
/** Passes with warnings listed under the table; the rest are counted. */
const FLAGGED_LISTED = 8;

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
  medianDevRatio: number | null;
  /** Passes whose fit carries a warning. */
  flagged: number;
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
  const fringes = list.filter((s) => !passWarnings(s.fit).noFringe);
  return {
    label,
    n: list.length,
    v: meanSd(fringes.map((s) => shownVisibility(s).value)),
    medianErr: median(fringes.map((s) => shownVisibility(s).err)),
    piezo: meanSd(fits.flatMap((f) => (f?.piezoNmPerV ? [f.piezoNmPerV.value] : []))),
    // Deviance over what a Poisson-limited fit averages at its counts says how far a fit is from
    // Poisson-limited (1) where p, at the counts of a bright bench, reads 0 for any small misfit.
    // That average is the dof at high counts but not at a few counts per bin or fewer
    // (`expectedDeviance`); passes fitted before it was stored have only the dof.
    medianDevRatio: median(fits.flatMap((f) => {
      const expected = f?.quality?.expectedDeviance ?? f?.quality?.dof;
      return f?.quality?.deviance !== undefined && expected ? [f.quality.deviance / expected] : [];
    })),
    flagged: list.filter((s) => passWarnings(s.fit).all.length > 0).length,
  };
}

/** One hovered sweep in words: when, which way, V, period, fit p-value, piezo calibration and warnings. */
function describe(s: Sweep): string {
  const f = sweepFit(s);
  const v = shownVisibility(s);
  const w = passWarnings(s.fit);
  const parts = [
    `${formatClock(s.start)}–${formatClock(s.end)}`,
    `${s.direction} pass`,
    w.noFringe ? `V ${v.net ? 'net' : 'raw'} ${formatNumber(v.value, 3)} (no significant fringe)` : `V ${v.net ? 'net' : 'raw'} ${formatValueErr(v)}`,
    `period ${formatNumber(s.periodX, 3)} V`,
    f?.quality ? `p = ${f.quality.pValue.toPrecision(2)}${f.quality.errorScale && f.quality.errorScale > 1 ? `, errors ×${f.quality.errorScale.toFixed(1)}` : ''}` : null,
    f?.piezoNmPerV ? `piezo ${formatValueErr(f.piezoNmPerV)} nm/V` : null,
    // The no-fringe warning is said with V above.
    ...w.all.filter((t) => t !== FIT_WARNING.noFringe).map((t) => `⚠ ${t}`),
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
  const noFringe = useMemo(() => sweeps.map((s) => passWarnings(s.fit).noFringe), [sweeps]);
  const hasNoFringe = noFringe.includes(true);
  const ref = useRef({ sweeps, noFringe, from, to });
  ref.current = { sweeps, noFringe, from, to };

  const data = (): uPlot.AlignedData => {
    const { sweeps: list, noFringe: flat } = ref.current;
    const shown = list.map(shownVisibility);
    // One x per sweep (its middle): each series is null where the pass belongs to another.
    const pick = (keep: (s: Sweep, i: number) => boolean) => list.map((s, i) => (keep(s, i) ? shown[i]!.value : null));
    return [list.map((s) => (s.start + s.end) / 2000), pick((s, i) => s.direction === 'up' && !flat[i]), pick((s, i) => s.direction === 'down' && !flat[i]), pick((_s, i) => !!flat[i])];
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
            list.forEach((s, i) => {
              const v = shownVisibility(s);
              // A pass without a fringe is drawn without a whisker: only its value needs room.
              const e = ref.current.noFringe[i] ? 0 : v.err;
              min = Math.min(min, v.value - e);
              max = Math.max(max, v.value + e);
            });
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
        // Small, hollow and muted, without a whisker: no fringe was measured. In the legend only when drawn, as on the live trend.
        { label: 'no significant fringe', ...(hasNoFringe ? {} : { class: 'hidden!' }), stroke: p.muted, width: 0, points: { show: true, size: 5, width: 1, fill: p.panel, stroke: p.muted } },
      ],
      hooks: {
        draw: [errorBars(1, lo, hi, withAlpha(p.accent, 0.55)), errorBars(2, lo, hi, withAlpha(p.ink, 0.45))],
        setCursor: [(u: uPlot) => setHover(u.cursor.idx ?? null)],
      },
    }),
    data,
    HEIGHT,
    hasNoFringe,
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
  const flaggedPasses = useMemo(() => sweeps.flatMap((s) => { const w = passWarnings(s.fit); return w.all.length > 0 ? [{ s, w, v: shownVisibility(s) }] : []; }), [sweeps]);
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
                <th scope="col" className="text-right" title="Deviance over what a fit limited by Poisson noise averages at its counts (the degrees of freedom at high counts): 1 for such a fit; above it, errors are widened by its square root">Median dev./expected</th>
                <th scope="col" className="text-right">With warnings</th>
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
                  <td className="text-right">{r.medianDevRatio !== null ? r.medianDevRatio.toPrecision(2) : '–'}</td>
                  <td className={`text-right ${r.flagged > 0 ? 'text-warn' : ''}`}>{r.flagged}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
      {flaggedPasses.length > 0 && (
        <div className="text-xs" data-testid="passes-with-warnings">
          <p className="mb-1 text-muted">
            Passes with fit warnings{flaggedPasses.length > FLAGGED_LISTED ? `, the latest ${FLAGGED_LISTED} of ${flaggedPasses.length}` : ''}
            {flaggedPasses.some((p) => p.w.noFringe) ? ' (those without a significant fringe are left out of the mean V and the median fit error)' : ''}:
          </p>
          <ul className="figure space-y-0.5">
            {flaggedPasses.slice(-FLAGGED_LISTED).map(({ s, w, v }) => (
              <li key={s.id ?? s.start} title={w.all.join('\n')}>
                <span className="text-muted">{formatClock(s.start)} {s.direction}</span>{' '}
                <span className={w.noFringe ? 'text-muted' : ''}>V {w.noFringe ? formatNumber(v.value, 3) : formatValueErr(v)}</span>{' '}
                <span className="font-sans text-warn">{warningsLine(w)}</span>
              </li>
            ))}
          </ul>
        </div>
      )}
    </section>
  );
}
