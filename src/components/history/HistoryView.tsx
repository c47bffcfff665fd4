// Any time range of a bench on one zoomable chart. The counts API sums bins server-side; we ask
// for a step that gives at most about one point per chart pixel, and ask again after every zoom.
// The fitted sweeps and the stability of the same range sit below it, each fetching on its own so
// the three requests run in parallel.
import { useEffect, useRef, useState } from 'react';
import type uPlot from 'uplot';
import type { ViewChannel } from '../../lib/bench-view.ts';
import { errorText, fetchCounts, type CountsAnswer } from '../../lib/client/api.ts';
import { formatDateTime, formatRate, parseLocalInput } from '../../lib/client/format.ts';
import { timeAxis, timeLegendValue, useUPlot } from '../charts/useUPlot.ts';
import { channelColour, heraldScale, rateAxes, rateScales } from '../bench/RatesChart.tsx';
import { ChartState } from '../charts/ChartState.tsx';
import { seriesLabel } from '../../lib/import-shapes.ts';
import { channelRates, wholeBuckets } from './history-range.ts';
import { pickStep } from '../../lib/time-steps.ts';
import { StabilityCard } from './StabilityCard.tsx';
import { SweepHistory } from './SweepHistory.tsx';

const PRESETS: { label: string; ms: number }[] = [
  { label: '10 min', ms: 10 * 60_000 },
  { label: '1 h', ms: 3_600_000 },
  { label: '6 h', ms: 6 * 3_600_000 },
  { label: '24 h', ms: 86_400_000 },
  { label: '7 d', ms: 7 * 86_400_000 },
];

interface Range {
  from: number;
  to: number;
}


/** `?from=&to=` of the page's address as a range, when both are whole ms and in order. */
function rangeFromAddress(): Range | null {
  const q = new URLSearchParams(window.location.search);
  const from = Number(q.get('from'));
  const to = Number(q.get('to'));
  return q.get('from') && q.get('to') && Number.isSafeInteger(from) && Number.isSafeInteger(to) && from >= 0 && to > from ? { from, to } : null;
}

export default function HistoryView({ benchId, channels }: { benchId: string; channels: ViewChannel[] }) {
  // The range lives in the address (?from=&to=, ms), so a reload keeps it and a colleague can be sent it.
  const [range, setRange] = useState<Range>(() => rangeFromAddress() ?? { from: Date.now() - 3_600_000, to: Date.now() });
  useEffect(() => {
    const url = new URL(window.location.href);
    url.searchParams.set('from', String(range.from));
    url.searchParams.set('to', String(range.to));
    window.history.replaceState(null, '', url);
  }, [range.from, range.to]);
  const [answer, setAnswer] = useState<CountsAnswer | null>(null);
  const [loading, setLoading] = useState(true);
  const [error, setError] = useState<string | null>(null);
  const [loadMs, setLoadMs] = useState<number | null>(null);
  const box = useRef<HTMLDivElement>(null);
  const answerRef = useRef(answer);
  answerRef.current = answer;
  /** When the shown answer arrived: its last bucket may still have been filling then. */
  const fetchedAt = useRef(0);
  const rangeRef = useRef(range);
  rangeRef.current = range;

  const width = () => Math.max(300, box.current?.clientWidth ?? 1200);
  const step = pickStep(range.to - range.from, width());

  const data = (): uPlot.AlignedData => {
    const a = answerRef.current;
    if (!a) return [[], ...channels.map(() => [])];
    const n = Object.values(a.channels)[0]?.length ?? 0;
    const x = new Float64Array(n);
    for (let i = 0; i < n; i++) x[i] = (a.t0 + (i + 0.5) * a.step) / 1000;
    const ys = channels.map((c) => channelRates(a, c.id, fetchedAt.current));
    return [x, ...ys];
  };

  const plot = useUPlot(
    box,
    (p) => ({
      legend: { show: true, live: true },
      cursor: { drag: { x: true, y: false, setScale: false } },
      select: { show: true, left: 0, top: 0, width: 0, height: 0 },
      scales: { x: { time: true, range: () => [rangeRef.current.from / 1000, rangeRef.current.to / 1000] }, ...rateScales(channels) },
      axes: [timeAxis(p), ...rateAxes(p, channels)],
      series: [
        { label: 'time', value: timeLegendValue },
        // An imported run's channels share the live ones' labels: they name their run.
        ...channels.map((c, i) => ({ label: seriesLabel(c), stroke: channelColour(p, c.role, i), width: 1.25, points: { show: false }, value: (_u: uPlot, v: number | null) => formatRate(v), ...heraldScale(c) })),
      ],
      hooks: {
        setSelect: [
          (u: uPlot) => {
            if (u.select.width < 4) return;
            const from = u.posToVal(u.select.left, 'x') * 1000;
            const to = u.posToVal(u.select.left + u.select.width, 'x') * 1000;
            u.setSelect({ left: 0, top: 0, width: 0, height: 0 }, false);
            setRange({ from: Math.round(from), to: Math.round(to) });
          },
        ],
      },
    }),
    data,
    360,
  );

  useEffect(() => {
    const ctl = new AbortController();
    setLoading(true);
    setError(null);
    const started = performance.now();
    const whole = wholeBuckets(range.from, range.to, step);
    fetchCounts(benchId, whole.from, whole.to, step, ctl.signal).then(
      (a) => {
        fetchedAt.current = Date.now();
        setAnswer(a);
        answerRef.current = a;
        plot.current?.setData(data());
        setLoadMs(performance.now() - started);
        setLoading(false);
      },
      (err) => {
        if (ctl.signal.aborted) return;
        setError(errorText(err));
        setLoading(false);
      },
    );
    return () => ctl.abort();
  }, [benchId, range.from, range.to, step]);

  const q = new URLSearchParams({ from: String(range.from), to: String(range.to), step: String(step) });
  const base = `/api/v1/benches/${encodeURIComponent(benchId)}/counts?${q}`;
  const empty = answer && Object.values(answer.channels).every((col) => col.every((v) => v == null || v === 0));

  return (
    <div className="space-y-4">
      <section className="card space-y-3" aria-labelledby="hist-h">
        <div className="flex flex-wrap items-end justify-between gap-3">
          <div>
            <h2 id="hist-h" className="font-semibold">Count rates</h2>
            <p className="figure text-xs text-muted" data-testid="history-range">
              {formatDateTime(range.from)} → {formatDateTime(range.to)} · step {step >= 1000 ? `${step / 1000} s` : `${step} ms`}
              {loadMs !== null && ` · loaded in ${loadMs.toFixed(0)} ms`}
            </p>
          </div>
          <div className="flex flex-wrap items-end gap-2">
            <div role="group" aria-label="Range ending now" className="flex overflow-hidden rounded-md border border-line">
              {PRESETS.map((p) => (
                <button key={p.label} type="button" className="figure px-2.5 py-1 text-xs hover:bg-sunken" onClick={() => { const now = Date.now(); setRange({ from: now - p.ms, to: now }); }}>
                  {p.label}
                </button>
              ))}
            </div>
            <TimeField
              label="From"
              value={range.from}
              accept={(t) => {
                if (t >= range.to) return false;
                setRange({ ...range, from: t });
                return true;
              }}
            />
            <TimeField
              label="To"
              value={range.to}
              accept={(t) => {
                if (t <= range.from) return false;
                setRange({ ...range, to: t });
                return true;
              }}
            />
          </div>
        </div>
        <div ref={box} className="relative min-h-[360px]" role="img" aria-label="Count rates over the chosen time range; drag across the chart to zoom in">
          {(loading || error || empty) && (
            <ChartState error={!!error} testId="history-state">
              {error ? `Could not load counts: ${error}` : loading ? 'Loading…' : 'No counts in this range.'}
            </ChartState>
          )}
        </div>
        <div className="flex flex-wrap items-center justify-between gap-2 text-sm">
          <p className="text-xs text-muted">Drag across the chart to zoom in; pick a preset to zoom out.</p>
          <div className="flex gap-2">
            <a className="btn" href={`${base}&format=csv`} download={`${benchId}-counts.csv`}>Export CSV</a>
            <a className="btn" href={base} download={`${benchId}-counts.json`}>Export JSON</a>
          </div>
        </div>
      </section>
      <SweepHistory benchId={benchId} from={range.from} to={range.to} />
      <StabilityCard benchId={benchId} channels={channels} from={range.from} to={range.to} />
    </div>
  );
}

/**
 * A local time typed as `YYYY-MM-DD HH:MM` (24 h), applied on Enter or when the field is left;
 * `accept` says whether the range takes it (From before To). A wrong entry is marked, not applied.
 */
function TimeField({ label, value, accept }: { label: string; value: number; accept: (ms: number) => boolean }) {
  const [text, setText] = useState(formatDateTime(value));
  const [bad, setBad] = useState(false);
  useEffect(() => {
    setText(formatDateTime(value));
    setBad(false);
  }, [value]);
  const commit = () => {
    const t = parseLocalInput(text);
    setBad(t === null || !accept(t));
  };
  return (
    <label>
      <span className="label">{label}</span>
      <input
        className={`field figure !py-1 w-[9.5rem] text-xs ${bad ? '!border-bad' : ''}`}
        value={text}
        placeholder="YYYY-MM-DD HH:MM"
        title={bad ? 'Not a local time, or From is not before To: YYYY-MM-DD HH:MM, 24 h' : 'Local time, YYYY-MM-DD HH:MM, 24 h'}
        aria-invalid={bad}
        spellCheck={false}
        onChange={(e) => setText(e.target.value)}
        onBlur={commit}
        onKeyDown={(e) => e.key === 'Enter' && commit()}
      />
    </label>
  );
}
