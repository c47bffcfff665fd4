// Every bench at a glance: online or not, both outputs over the last minutes, visibility and where
// it came from, open alarms by severity, the active run and who started it. The figures are polled
// (every 2 s, the sparkline's counts and the open alarms every 5 s) rather than streamed: one bench
// socket per card would stream every count for a summary. Whether gateways are online follows one
// status-only socket for all the benches (gateway-presence.ts), so a gateway that drops or is
// revoked turns its card offline at once, as on the bench page.
import { useMemo } from 'react';
import type { AlarmEventView, Severity } from '../../lib/alarm-messages.ts';
import { newestPassAt, type BenchFigures } from '../../lib/bench-figures.ts';
import { figuresStaleness } from '../../lib/figures-age.ts';
import type { PresenceFeed } from '../../lib/client/gateway-presence.ts';
import { errorText, fetchCounts, fetchFigures, fetchOpenAlarms, type CountsAnswer } from '../../lib/client/api.ts';
import { formatDuration, formatRate, formatValueErr, SILENT_TITLE } from '../../lib/client/format.ts';
import { useNow } from '../../lib/client/use-now.ts';
import { usePolled } from '../../lib/client/use-polled.ts';
import { gatewayBadge, type GatewayBadge, type OverviewBench } from '../../lib/overview.ts';
import { gatewayStateText } from '../bench/gateway-state.ts';
import { useSeenOnline } from '../bench/useBenchSetup.ts';
import { useGatewayPresence } from '../bench/useGatewayPresence.ts';
import { channelRates, wholeBuckets } from '../history/history-range.ts';
import { Sparkline } from './Sparkline.tsx';

/** Poll period of the figures, ms (the server recomputes them about once a second). */
const POLL_MS = 2000;
/** Poll period of the sparkline's counts and the open alarms, ms: one sparkline bucket. */
const SLOW_POLL_MS = 5000;
/** The sparkline's span and bucket, ms: 120 points, served from the 1 s rollups. */
const SPARK_SPAN_MS = 10 * 60_000;
const SPARK_STEP_MS = 5000;

type Live = { figures: BenchFigures | null; error: string | null; loaded: boolean };
/** Counts and open alarms of a bench from the slower poll; null while not (yet) loaded. */
/** `asOf`: when the counts came, for leaving out the bucket still filling then. */
type Slow = { counts: CountsAnswer | null; alarms: AlarmEventView[] | null; asOf: number };

const SEVERITY_RANK: Record<Severity, number> = { info: 0, warning: 1, critical: 2 };
const BADGE_TONE: Record<GatewayBadge['tone'], string> = { good: 'border-good text-good', warn: 'border-warn text-warn', bad: 'border-bad text-bad', quiet: 'border-line text-muted' };
const SEVERITY_TONE: Record<Severity, string> = { info: 'text-muted', warning: 'text-warn', critical: 'font-semibold text-bad' };

/** counts/s of a channel's buckets over the time its gateway recorded, as on the history chart. */
function rates(c: CountsAnswer, channel: string | undefined, asOf: number): (number | null)[] {
  return channel ? channelRates(c, channel, asOf) : [];
}

/** Open alarms as the card says them: count and the worst severity's colour. */
function alarmSummary(b: OverviewBench, alarms: AlarmEventView[] | null): { text: string; tone: string; title: string | undefined } {
  if (!alarms) {
    // Until the first poll answers, the counts the page was rendered with.
    const tone = b.criticalAlarms ? SEVERITY_TONE.critical : b.openAlarms ? SEVERITY_TONE.warning : 'text-muted';
    return { text: b.openAlarms ? `${b.openAlarms} open alarm${b.openAlarms > 1 ? 's' : ''}` : 'no open alarms', tone, title: undefined };
  }
  if (alarms.length === 0) return { text: 'no open alarms', tone: 'text-muted', title: undefined };
  const worst = alarms.reduce<Severity>((w, e) => (SEVERITY_RANK[e.severity] > SEVERITY_RANK[w] ? e.severity : w), 'info');
  const n = alarms.length;
  return { text: `${n} open alarm${n > 1 ? 's' : ''} · ${worst}`, tone: SEVERITY_TONE[worst], title: alarms.map((e) => e.message).join('\n') };
}

export default function LabOverview({ benches }: { benches: OverviewBench[] }) {
  // Figures every 2 s; the time of their answer is "now" for their age and the runs' durations.
  const fast = usePolled(
    async () => {
      const results = await Promise.all(
        benches.map(async (b): Promise<[string, Live]> => {
          try {
            return [b.id, { figures: await fetchFigures(b.id), error: null, loaded: true }];
          } catch (err) {
            return [b.id, { figures: null, error: errorText(err), loaded: true }];
          }
        }),
      );
      // Maps by bench id: a plain object would answer a bench "constructor" with Object before its first poll.
      return { live: new Map(results), at: Date.now() };
    },
    POLL_MS,
    [benches],
  );
  const slow =
    usePolled(
      async () => {
        const now = Date.now();
        const { from, to } = wholeBuckets(now - SPARK_SPAN_MS, now, SPARK_STEP_MS);
        const results = await Promise.all(
          benches.map(async (b): Promise<[string, Slow]> => {
            // A failed sparkline or alarm read keeps the card's other figures; the figures poll reports the bench's errors.
            const [counts, alarms] = await Promise.all([fetchCounts(b.id, from, to, SPARK_STEP_MS).catch(() => null), fetchOpenAlarms(b.id).catch(() => null)]);
            return [b.id, { counts, alarms, asOf: Date.now() }];
          }),
        );
        return new Map(results);
      },
      SLOW_POLL_MS,
      [benches],
    ) ?? new Map<string, Slow>();
  const live = fast?.live ?? new Map<string, Live>();
  const mountedAt = useNow();
  const now = fast?.at ?? mountedAt;
  const feed = useMemo<PresenceFeed>(() => ({ kind: 'status', benches: benches.map((b) => b.id) }), [benches]);

  return (
    <ul className="grid gap-4 sm:grid-cols-2 xl:grid-cols-3" aria-label="Benches">
      {benches.map((b) => (
        <BenchCard key={b.id} b={b} feed={feed} live={live.get(b.id)} slow={slow.get(b.id)} now={now} />
      ))}
    </ul>
  );
}

/** One bench's card. Its gateway badge follows the page's status socket (`feed`), as the bench page's header follows its own. */
function BenchCard({ b, feed, live: l, slow: sl, now }: { b: OverviewBench; feed: PresenceFeed; live: Live | undefined; slow: Slow | undefined; now: number | null }) {
  const gateways = useGatewayPresence(b.id, b.gateways, feed);
  const gatewaysOnline = gateways.filter((g) => g.online).length;
  const f = l?.figures ?? null;
  const a = f?.channels.find((c) => c.role === 'out_a');
  const o = f?.channels.find((c) => c.role === 'out_b');
  const stale = f && now !== null ? figuresStaleness(f.at, now, gatewaysOnline, gateways.length) : null;
  const seenOnline = useSeenOnline(gateways);
  const silent = gateways.filter((g) => g.silentSince !== undefined);
  const badge = gatewayBadge({ gatewaysOnline, gatewaysSilent: silent.length, gatewaysTotal: gateways.length, gatewaysEverSeen: seenOnline ? Math.max(1, b.gatewaysEverSeen) : b.gatewaysEverSeen });
  const v = f?.visibility ?? null;
  // The newest pass, as the bench page leads with it, and how old it is: a pass from before the last touch or drift is seen to be.
  const shownV = v?.newest ?? v;
  const passTime = v ? newestPassAt(v) : undefined;
  const passAge = passTime !== undefined && now !== null ? formatDuration(now - passTime) : null;
  const alarm = alarmSummary(b, sl?.alarms ?? null);
  return (
    <li className="card flex min-w-0 flex-col gap-3" data-testid={`bench-card-${b.id}`}>
      <div className="flex items-start justify-between gap-2">
        <div className="min-w-0">
          <a href={`/benches/${b.id}`} className="text-lg font-semibold hover:underline">{b.name}</a>
          <p className="truncate text-xs text-muted" title={b.description || undefined}>
            <span className="figure">{b.wavelengthNm} nm</span>
            {b.description && ` · ${b.description}`}
          </p>
        </div>
        <span
          className={`shrink-0 whitespace-nowrap rounded-full border px-2 py-0.5 text-xs font-medium ${BADGE_TONE[badge.tone]}`}
          aria-live="polite"
          title={gateways.map((g) => `${g.id} ${gatewayStateText(g, now)}`).join('\n') || undefined}
          data-testid={`bench-gateways-${b.id}`}
        >
          {badge.text}
          {badge.count && <span className="figure"> {badge.count}</span>}
        </span>
      </div>
      <div>
        <Sparkline
          label={`Rates of both outputs over the last ${SPARK_SPAN_MS / 60_000} minutes`}
          series={sl?.counts ? [{ className: 'stroke-ember', values: rates(sl.counts, a?.channel, sl.asOf) }, { className: 'stroke-tide', values: rates(sl.counts, o?.channel, sl.asOf) }] : []}
        />
        <p className="mt-0.5 flex justify-between text-[11px] text-muted">
          <span>−{SPARK_SPAN_MS / 60_000} min</span>
          <span>now</span>
        </p>
      </div>
      <dl className="grid grid-cols-2 gap-x-2 gap-y-2">
        <div className="min-w-0">
          <dt className="label truncate" title={a?.label ?? 'Out A'}>{a?.label ?? 'Out A'}</dt>
          <dd className="figure whitespace-nowrap text-lg text-ember">{formatRate(a?.rateRaw)}</dd>
        </div>
        <div className="min-w-0">
          <dt className="label truncate" title={o?.label ?? 'Out B'}>{o?.label ?? 'Out B'}</dt>
          <dd className="figure whitespace-nowrap text-lg text-tide">{formatRate(o?.rateRaw)}</dd>
        </div>
        <div className="col-span-2">
          <dt className="label">Visibility{v?.net ? ', net of darks' : ''}</dt>
          {/* The figure stays whole (no-break spaces); its source note wraps under it on a narrow card. */}
          <dd className="flex flex-wrap items-baseline gap-x-2" data-testid={`bench-visibility-${b.id}`}>
            <span className="figure text-lg" title={v?.newest && v.passes && v.passes > 1 ? `mean of ${v.passes} passes ${formatValueErr(v)}` : undefined}>{shownV ? formatValueErr(shownV) : '–'}</span>
            <span className="text-xs text-muted">
              {!v ? 'needs a sweep or drift' : v.source === 'envelope' ? 'fringe envelope' : v.newest ? `newest pass${passAge ? `, ${passAge} ago` : ''}` : `mean of recent passes${passAge ? `, newest ${passAge} ago` : ''}`}
            </span>
          </dd>
        </div>
      </dl>
      {silent.map((g) => (
        <p key={g.id} className="text-xs text-warn" title={SILENT_TITLE} data-testid={`bench-silent-${g.id}`}>
          {g.id} {gatewayStateText(g, now)}
        </p>
      ))}
      {!l?.loaded && <p className="text-xs text-muted">Loading figures…</p>}
      {l?.error && <p className="text-xs text-bad">Figures unavailable: {l.error}</p>}
      {l?.loaded && !l.error && !f && <p className="text-xs text-muted">No counts yet.</p>}
      {stale && (
        <p className="text-xs text-warn" data-testid={`bench-stale-${b.id}`}>
          {stale.offline ? 'No gateway online: figures' : 'Figures'} are {formatDuration(stale.ageMs)} old.
        </p>
      )}
      <div className="mt-auto flex flex-wrap items-center justify-between gap-x-3 gap-y-1 border-t border-line pt-2 text-xs">
        <a href={`/benches/${b.id}#alarms`} className={`hover:underline ${alarm.tone}`} title={alarm.title}>{alarm.text}</a>
        <span className="min-w-0 text-muted">
          {b.activeRun ? (
            <>
              <a className="text-ink hover:underline" href={`/runs/${b.activeRun.id}`}>{b.activeRun.title}</a> · {b.activeRun.startedBy?.name ?? 'someone'} · <span className="figure">{now === null ? '…' : formatDuration(now - b.activeRun.startMs)}</span>
            </>
          ) : (
            'no active run'
          )}
        </span>
      </div>
    </li>
  );
}
