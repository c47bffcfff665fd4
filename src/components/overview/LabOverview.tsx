// Every bench at a glance: online or not, both outputs over the last minutes, visibility and where
// it came from, open alarms by severity, the active run and who started it. The page costs the same
// few requests whatever the number of benches (each one polled per bench kept the browser's six
// connections per host busy, and the page's own scripts waited behind them): the figures come with
// the server's render, then over the page's one status-only socket for every bench the user may
// read, which also says whether gateways are online (gateway-presence.ts), so a gateway that drops
// or is revoked turns its card offline at once, as on the bench page; the sparklines' counts and the
// open alarms of all benches come in one request every 5 s (`GET /api/v1/overview`). A bench that
// read names and the page has no card for (made after it loaded) is asked for once and gets one;
// the socket follows it already (the hub takes up benches made after it opened).
import { useEffect, useRef, useState } from 'react';
import type { AlarmEventView, Severity } from '../../lib/alarm-messages.ts';
import { benchFiguresSchema } from '../../lib/bench-figures-schema.ts';
import { newestPassAt, type BenchFigures } from '../../lib/bench-figures.ts';
import { figuresStaleness } from '../../lib/figures-age.ts';
import { STATUS_FEED } from '../../lib/client/gateway-presence.ts';
import { fetchOverview, fetchOverviewBenches, type CountsAnswer } from '../../lib/client/api.ts';
import { formatDuration, formatRate, formatValueErr, SILENT_TITLE } from '../../lib/client/format.ts';
import { statusSocket } from '../../lib/client/live-socket.ts';
import { useNow } from '../../lib/client/use-now.ts';
import { usePolled } from '../../lib/client/use-polled.ts';
import { gatewayBadge, type GatewayBadge, type OverviewBench } from '../../lib/overview.ts';
import { gatewayStateText } from '../bench/gateway-state.ts';
import { useSeenOnline } from '../bench/useBenchSetup.ts';
import { useGatewayPresence } from '../bench/useGatewayPresence.ts';
import { channelRates, wholeBuckets } from '../history/history-range.ts';
import { Sparkline } from './Sparkline.tsx';

/** How often the figures' ages and the runs' durations are brought up to date, ms: as often as the figures poll did. */
const CLOCK_MS = 2000;
/** Poll period of the sparklines' counts and the open alarms, ms: one sparkline bucket. */
const SLOW_POLL_MS = 5000;
/** The sparkline's span and bucket, ms: 120 points, served from the 1 s rollups. */
const SPARK_SPAN_MS = 10 * 60_000;
const SPARK_STEP_MS = 5000;
/** New benches asked for in one read at most (the endpoint's bound); more come at the next poll. */
const MAX_NEW_BENCHES = 100;

/** Counts and open alarms of a bench from the slower poll. `asOf`: when the counts came, for leaving out the bucket still filling then. */
type Slow = { counts: CountsAnswer; alarms: AlarmEventView[]; asOf: number };

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

/** `isAdmin`: an empty lab's note leads an admin to where benches are made. */
export default function LabOverview({ benches, isAdmin }: { benches: OverviewBench[]; isAdmin: boolean }) {
  // Benches made since the render, and the ids of every bench with a card (or being asked for).
  const [added, setAdded] = useState<OverviewBench[]>([]);
  const carded = useRef<Set<string> | null>(null);
  const slow =
    usePolled(
      async () => {
        const now = Date.now();
        const { from, to } = wholeBuckets(now - SPARK_SPAN_MS, now, SPARK_STEP_MS);
        // A failed read leaves the sparklines empty and the alarms as rendered until the next one.
        const answer = await fetchOverview(from, to, SPARK_STEP_MS).catch(() => null);
        const asOf = Date.now();
        const known = (carded.current ??= new Set(benches.map((b) => b.id)));
        const fresh = (answer?.benches ?? []).map((b) => b.id).filter((id) => !known.has(id)).slice(0, MAX_NEW_BENCHES);
        if (fresh.length) {
          for (const id of fresh) known.add(id);
          // A failed read forgets them, so the next poll asks again.
          void fetchOverviewBenches(fresh).then(
            (got) => setAdded((a) => [...a, ...got.filter((g) => !a.some((x) => x.id === g.id))]),
            () => fresh.forEach((id) => known.delete(id)),
          );
        }
        // Maps by bench id: a plain object would answer a bench "constructor" with Object.
        return new Map((answer?.benches ?? []).map((b): [string, Slow] => [b.id, { counts: b.counts, alarms: b.openAlarms, asOf }]));
      },
      SLOW_POLL_MS,
      [],
    ) ?? new Map<string, Slow>();
  const now = useNow(CLOCK_MS);
  // In the order of the latest read (the benches' names), which places new cards among the others.
  const rank = new Map([...slow.keys()].map((id, i) => [id, i]));
  const cards = [...benches, ...added].sort((x, y) => (rank.get(x.id) ?? rank.size) - (rank.get(y.id) ?? rank.size));

  // An empty lab's page stays open while its first bench is made: the note gives way to the card.
  if (cards.length === 0) {
    return (
      <p className="text-muted" data-testid="no-benches">
        {isAdmin ? (
          <>
            No benches yet. Create the lab's first one under <a className="underline" href="/admin/benches">Benches &amp; gateways</a>, then give it a gateway.
          </>
        ) : (
          'No benches yet. An admin adds them under Benches & gateways.'
        )}
      </p>
    );
  }
  return (
    <ul className="grid gap-4 sm:grid-cols-2 xl:grid-cols-3" aria-label="Benches">
      {cards.map((b) => (
        <BenchCard key={b.id} b={b} slow={slow.get(b.id)} now={now} />
      ))}
    </ul>
  );
}

/** The bench's live figures: those of the render, then each `figures` message for it on the status socket. */
function useLiveFigures(benchId: string, initial: BenchFigures | null): BenchFigures | null {
  const [figures, setFigures] = useState(initial);
  useEffect(
    () =>
      statusSocket().subscribe((m) => {
        if (m.type !== 'figures' || m.bench !== benchId) return;
        const f = benchFiguresSchema.safeParse(m['figures']);
        if (f.success) setFigures(f.data);
      }),
    [benchId],
  );
  return figures;
}

/** One bench's card. Its gateway badge and figures follow the page's status socket, as the bench page's header and figures follow its own. */
function BenchCard({ b, slow: sl, now }: { b: OverviewBench; slow: Slow | undefined; now: number | null }) {
  const gateways = useGatewayPresence(b.id, b.gateways, STATUS_FEED);
  const gatewaysOnline = gateways.filter((g) => g.online).length;
  const f = useLiveFigures(b.id, b.figures);
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
          <dd className="figure whitespace-nowrap text-lg text-ember" data-testid={`bench-rate-a-${b.id}`}>{formatRate(a?.rateRaw)}</dd>
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
      {!f && <p className="text-xs text-muted">No counts yet.</p>}
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
