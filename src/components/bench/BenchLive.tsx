// The bench live view: one island so the panels share one subscription and one set of buffers.
// Count messages go into typed ring buffers (rates, fringe cells) and only mark charts dirty;
// figures (≈1/s), fitted sweeps and alarms update React state.
import { useCallback, useEffect, useMemo, useRef, useState } from 'react';
import AlarmList from '../AlarmList.tsx';
import { alarmMessageSchema, applyAlarmMessage, type AlarmEventView } from '../../lib/alarm-messages.ts';
import type { BenchViewData, ViewerData } from '../../lib/bench-view.ts';
import type { BenchFigures } from '../../lib/bench-figures.ts';
import { benchFiguresSchema } from '../../lib/bench-figures-schema.ts';
import { ApiError, errorText, fetchCounts, fetchFigures, fetchSweeps, sweepSchema, sweepsReplacedSchema, type Sweep } from '../../lib/client/api.ts';
import { DriveTracker } from '../../lib/client/drive-state.ts';
import { FringeCells } from '../../lib/client/fringe-cells.ts';
import { RateRing } from '../../lib/client/rate-ring.ts';
import { BACKFILL_CLOCK_SLACK_MS, backfillRates } from '../../lib/client/rates-backfill.ts';
import type { CountsMessage } from '../../lib/live-messages.ts';
import { passWarnings } from '../../lib/pass-warnings.ts';
import { noteMessageSchema, runMessageSchema } from '../../lib/runs.ts';
import { FringeChart, type FringeHandle } from './FringeChart.tsx';
import { RatesChart, type RatesHandle } from './RatesChart.tsx';
import { PhotonStats, Readouts } from './Readouts.tsx';
import { RunPanel, type RunPush } from './RunPanel.tsx';
import { DriveStateLine } from './DriveStateLine.tsx';
import { DriveStrip } from './DriveStrip.tsx';
import { SweepControl } from './SweepControl.tsx';
import { VisibilityTrend, type EnvelopePoint } from './VisibilityTrend.tsx';
import { LiveBanner } from './LiveBanner.tsx';
import { AlarmBanner } from './AlarmBanner.tsx';
import { useLiveFeed } from './useLiveFeed.ts';
import { useBenchSetup } from './useBenchSetup.ts';
import { BenchSetupNotice } from './BenchSetupNotice.tsx';
import { figuresStaleness } from '../../lib/figures-age.ts';
import { useNow } from '../../lib/client/use-now.ts';

/** The trend shows this much history, ms. */
const TREND_MS = 30 * 60_000;
/** Rates history fetched on load: the longest window, ms. */
const RATES_BACKFILL_MS = 10 * 60_000;
/** Step of the backfill, ms: the ring's bucket width. */
const BACKFILL_STEP_MS = 100;
/** Most envelope points kept (one per figures message ≈ 1/s over the trend span). */
const MAX_ENVELOPE = 1800;

export default function BenchLive(props: { bench: BenchViewData; viewer: ViewerData; alarms: AlarmEventView[] }) {
  const { bench, viewer } = props;
  const channelIds = useMemo(() => bench.channels.map((c) => c.id), [bench]);
  const ring = useMemo(() => new RateRing(channelIds), [channelIds]);
  const corrections = useMemo(() => new Set(bench.channels.filter((c) => c.darkRate !== null || c.deadTimeNs !== null).map((c) => c.id)), [bench.channels]);
  const cells = useMemo(() => new FringeCells(bench.drive.min, bench.drive.max), [bench]);
  const rates = useRef<RatesHandle | null>(null);
  const fringe = useRef<FringeHandle | null>(null);

  const [hasCounts, setHasCounts] = useState(false);
  const [countsError, setCountsError] = useState<string | null>(null);
  const [figures, setFigures] = useState<BenchFigures | null>(null);
  const [figuresLoading, setFiguresLoading] = useState(true);
  const [figuresError, setFiguresError] = useState<string | null>(null);
  const [sweeps, setSweeps] = useState<Sweep[]>([]);
  const [sweepsLoading, setSweepsLoading] = useState(true);
  const [sweepsError, setSweepsError] = useState<string | null>(null);
  const [envelope, setEnvelope] = useState<EnvelopePoint[]>([]);
  const [hasCc, setHasCc] = useState(false);
  const [alarms, setAlarms] = useState<AlarmEventView[]>(props.alarms);
  // Every push kept in order (the last 50): two arriving before one render must both reach the panel.
  const [runPushes, setRunPushes] = useState<RunPush[]>([]);
  const seenCounts = useRef(false);
  const drive = useMemo(() => new DriveTracker(), []);

  const onCounts = useCallback(
    (m: CountsMessage) => {
      const ch: Record<string, number[]> = {};
      for (const [k, v] of Object.entries(m.ch)) ch[`${m.gateway}/${k}`] = v;
      ring.add(m.t0, m.dt, ch);
      if (m.x) drive.add(m.t0, m.dt, m.x);
      if (m.x && bench.outA && bench.outB) {
        const a = ch[bench.outA];
        const b = ch[bench.outB];
        if (a && b) cells.add(m.x, a, b, m.dt);
        fringe.current?.invalidate();
      }
      if (m.cc && !hasCc) setHasCc(true);
      rates.current?.invalidate();
      if (!seenCounts.current) {
        seenCounts.current = true;
        setHasCounts(true);
      }
    },
    [ring, cells, bench, hasCc, drive],
  );

  const onMessage = useCallback(
    (msg: { type: string; [k: string]: unknown }) => {
      if (msg.type === 'figures') {
        const f = benchFiguresSchema.safeParse(msg['figures']);
        if (f.success) {
          setFigures(f.data);
          const v = f.data.visibility;
          if (v && v.source === 'envelope') setEnvelope((e) => [...e.slice(-(MAX_ENVELOPE - 1)), { t: f.data.at, v: v.value }]);
        }
      } else if (msg.type === 'sweep') {
        const s = sweepSchema.safeParse(msg['sweep']);
        // A refit's sweeps can be older than the newest one: kept in time order.
        if (s.success) setSweeps((list) => [...list.filter((x) => x.start > Date.now() - TREND_MS && x.id !== s.data.id), s.data].sort((p, q) => p.start - q.start));
      } else if (msg.type === 'sweeps-replaced') {
        const r = sweepsReplacedSchema.safeParse(msg);
        if (r.success) setSweeps((list) => list.filter((x) => x.id === undefined || !r.data.ids.includes(x.id)));
      } else if (msg.type === 'alarm') {
        const a = alarmMessageSchema.safeParse(msg);
        if (a.success) setAlarms((list) => applyAlarmMessage(list, a.data));
      } else if (msg.type === 'run') {
        const r = runMessageSchema.safeParse(msg);
        if (r.success) setRunPushes((list) => [...list.slice(-49), { seq: (list.at(-1)?.seq ?? 0) + 1, run: r.data.run }]);
      } else if (msg.type === 'note') {
        const n = noteMessageSchema.safeParse(msg);
        if (n.success) setRunPushes((list) => [...list.slice(-49), { seq: (list.at(-1)?.seq ?? 0) + 1, note: n.data.note }]);
      }
    },
    [],
  );

  const live = useLiveFeed(bench.id, { onCounts, onMessage });
  const { presence: gateways, setup } = useBenchSetup(bench.id, bench.gateways);
  // Ticks so the figures turn stale, and their ages count, while nothing arrives.
  const now = useNow(1000);
  const online = gateways.filter((g) => g.online).length;
  const stale = figures && now !== null ? figuresStaleness(figures.at, now, online, gateways.length) : null;

  // Backfill what the page missed before the socket opened: rates, sweeps, the latest figures.
  useEffect(() => {
    const ctl = new AbortController();
    const now = Date.now();
    // The step must be a multiple of the stored bin width: 100 ms suits bins up to 100 ms, 1 s the rest.
    const to = now + BACKFILL_CLOCK_SLACK_MS;
    fetchCounts(bench.id, now - RATES_BACKFILL_MS, to, BACKFILL_STEP_MS, ctl.signal)
      .catch((err: unknown) => {
        if (err instanceof ApiError && err.status === 422) return fetchCounts(bench.id, now - RATES_BACKFILL_MS, to, 1000, ctl.signal);
        throw err;
      })
      .then(
      (c) => {
        if (backfillRates(ring, c)) setHasCounts(true);
        rates.current?.invalidate();
      },
      (err) => !ctl.signal.aborted && setCountsError(`History unavailable: ${errorText(err)}`),
    );
    fetchSweeps(bench.id, now - TREND_MS, now, ctl.signal, 'live').then(
      (list) => {
        setSweeps((cur) => [...list, ...cur.filter((s) => !list.some((l) => l.id === s.id))].sort((a, b) => a.start - b.start));
        setSweepsLoading(false);
      },
      (err) => {
        if (ctl.signal.aborted) return;
        setSweepsError(errorText(err));
        setSweepsLoading(false);
      },
    );
    fetchFigures(bench.id, ctl.signal).then(
      (f) => {
        setFigures((cur) => cur ?? f);
        setFiguresLoading(false);
      },
      (err) => {
        if (ctl.signal.aborted) return;
        setFiguresError(errorText(err));
        setFiguresLoading(false);
      },
    );
    return () => ctl.abort();
  }, [bench.id]);

  const outLabels = {
    a: bench.channels.find((c) => c.id === bench.outA)?.label ?? 'Output A',
    b: bench.channels.find((c) => c.id === bench.outB)?.label ?? 'Output B',
  };
  const lastSweep = sweeps.at(-1) ?? null;
  // Oldest first: without a pass that approaches the right way, the newest stands.
  const lastPasses = (['up', 'down'] as const).flatMap((way) => sweeps.findLast((s) => s.direction === way) ?? []).sort((p, q) => p.start - q.start);
  const latestPass = lastSweep ? passWarnings(lastSweep.fit) : null;

  return (
    <div className="space-y-4">
      <LiveBanner state={live} />
      <AlarmBanner events={alarms} />
      {/* Pinned while the page scrolls, so the drive can be stopped from anywhere on it. */}
      <DriveStrip benchId={bench.id} tracker={drive} canOperate={viewer.canOperate} />
      {setup && <BenchSetupNotice bench={bench.id} setup={setup} isAdmin={viewer.role === 'admin'} />}
      {/* A gateway never heard from has no last batch for the figures to stop at: the notice above says why nothing comes. */}
      <Readouts figures={figures} loading={figuresLoading && !figures} error={figures ? null : figuresError} corrections={corrections} latestPass={latestPass} stale={stale} offline={gateways.length > 0 && online === 0 && !setup} now={now} />
      <div className="grid gap-4 xl:grid-cols-2">
        <RatesChart ring={ring} channels={bench.channels} onReady={(h) => (rates.current = h)} hasData={hasCounts} error={hasCounts ? null : countsError} />
        <FringeChart
          cells={cells}
          sweeps={sweeps}
          labels={outLabels}
          onReady={(h) => (fringe.current = h)}
          onClear={() => {
            cells.clear();
            fringe.current?.invalidate();
          }}
        />
      </div>
      {/* Right under the fringes it moves: an operator aligning the bench has both on one screen.
          The drive's five fields need the full width of a tablet. */}
      <div className="grid gap-4 xl:grid-cols-2">
        {viewer.canOperate ? (
          <SweepControl
            bench={bench}
            drive={drive}
            lastSweep={lastSweep}
            lastPasses={lastPasses}
            onSweepStarted={() => {
              cells.clear();
              fringe.current?.invalidate();
            }}
          />
        ) : (
          <section id="drive" className="card scroll-mt-16 text-sm text-muted" aria-label="Drive">
            <h2 className="mb-1 font-semibold text-ink">Drive</h2>
            <div className="mb-2 text-ink"><DriveStateLine tracker={drive} /></div>
            <p>You are following this bench read-only ({viewer.role}). Operators drive scans and runs.</p>
            <p className="figure mt-1 text-xs">limits {bench.drive.min}–{bench.drive.max} V · step ≤ {bench.drive.maxStep} V · dwell ≥ {bench.drive.minDwellMs} ms</p>
          </section>
        )}
        <RunPanel benchId={bench.id} initialRun={bench.activeRun} canOperate={viewer.canOperate} figures={figures} pushed={runPushes} />
      </div>
      {/* Side by side only from xl: at tablet width a third is too narrow for the statistics' values. */}
      <div className="grid gap-4 xl:grid-cols-3">
        <div className="xl:col-span-2">
          <VisibilityTrend sweeps={sweeps} envelope={envelope} limit={bench.visibilityLimit} loading={sweepsLoading} error={sweepsError} span={{ from: null, to: null }} windowMs={TREND_MS} />
        </div>
        <PhotonStats figures={figures} hasCoincidences={hasCc} stale={stale} />
      </div>
      <section id="alarms" className="card scroll-mt-16" aria-labelledby="alarms-h">
        <h2 id="alarms-h" className="mb-2 font-semibold">Alarms</h2>
        {/* The list keeps its own copy from the same socket, so an acknowledgement made here also clears the banner through the server's message. */}
        <AlarmList benchId={bench.id} initial={props.alarms} canAck={viewer.canOperate} />
      </section>
    </div>
  );
}
