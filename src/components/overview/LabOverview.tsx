// Every bench at a glance: online or not, both output rates, visibility, open alarms, the active
// run and who started it. Figures are polled (every 2 s) rather than streamed: one socket per
// bench for a summary card would cost more than it shows.
import { useEffect, useState } from 'react';
import type { BenchFigures } from '../../lib/bench-figures.ts';
import { errorText, fetchFigures } from '../../lib/client/api.ts';
import { formatDuration, formatRate, formatValueErr } from '../../lib/client/format.ts';
import type { OverviewBench } from '../../lib/overview.ts';

/** Poll period of the figures, ms (the server recomputes them about once a second). */
const POLL_MS = 2000;
/** Figures older than this are shown as stale, ms. */
const STALE_MS = 10_000;

type Live = { figures: BenchFigures | null; error: string | null; loaded: boolean };

export default function LabOverview({ benches }: { benches: OverviewBench[] }) {
  const [live, setLive] = useState<Record<string, Live>>({});
  const [now, setNow] = useState(() => Date.now());

  useEffect(() => {
    let stopped = false;
    const poll = async () => {
      const results = await Promise.all(
        benches.map(async (b): Promise<[string, Live]> => {
          try {
            return [b.id, { figures: await fetchFigures(b.id), error: null, loaded: true }];
          } catch (err) {
            return [b.id, { figures: null, error: errorText(err), loaded: true }];
          }
        }),
      );
      if (stopped) return;
      setLive(Object.fromEntries(results));
      setNow(Date.now());
    };
    void poll();
    const t = setInterval(() => void poll(), POLL_MS);
    return () => {
      stopped = true;
      clearInterval(t);
    };
  }, [benches]);

  if (benches.length === 0) return <p className="text-muted">No benches yet. An admin adds them under Benches &amp; gateways.</p>;

  return (
    <ul className="grid gap-4 sm:grid-cols-2 xl:grid-cols-3" aria-label="Benches">
      {benches.map((b) => {
        const l = live[b.id];
        const f = l?.figures ?? null;
        const a = f?.channels.find((c) => c.role === 'out_a');
        const o = f?.channels.find((c) => c.role === 'out_b');
        const stale = f ? now - f.at > STALE_MS : false;
        const online = b.gatewaysOnline > 0;
        return (
          <li key={b.id} className="card flex flex-col gap-3" data-testid={`bench-card-${b.id}`}>
            <div className="flex items-start justify-between gap-2">
              <div>
                <a href={`/benches/${b.id}`} className="text-lg font-semibold hover:underline">{b.name}</a>
                <p className="figure text-xs text-muted">{b.wavelengthNm} nm</p>
              </div>
              <span className={`shrink-0 whitespace-nowrap rounded-full border px-2 py-0.5 text-xs font-medium ${online ? 'border-good text-good' : 'border-bad text-bad'}`}>
                {online ? 'online' : 'offline'}
                <span className="figure"> {b.gatewaysOnline}/{b.gatewaysTotal}</span>
              </span>
            </div>
            <dl className="grid grid-cols-3 gap-2">
              <div>
                <dt className="label">Out A</dt>
                <dd className="figure text-lg text-ember">{formatRate(a?.rateRaw)}</dd>
              </div>
              <div>
                <dt className="label">Out B</dt>
                <dd className="figure text-lg text-tide">{formatRate(o?.rateRaw)}</dd>
              </div>
              <div>
                <dt className="label">Visibility</dt>
                <dd className="figure text-lg">{f?.visibility ? formatValueErr(f.visibility, 3).split(' ± ')[0] : '–'}</dd>
              </div>
            </dl>
            {!l?.loaded && <p className="text-xs text-muted">Loading figures…</p>}
            {l?.error && <p className="text-xs text-bad">Figures unavailable: {l.error}</p>}
            {l?.loaded && !l.error && !f && <p className="text-xs text-muted">No counts yet.</p>}
            {stale && <p className="text-xs text-warn">Figures are {formatDuration(now - f!.at)} old.</p>}
            <div className="mt-auto flex flex-wrap items-center justify-between gap-2 border-t border-line pt-2 text-xs">
              <span className={b.criticalAlarms ? 'font-semibold text-bad' : b.openAlarms ? 'text-warn' : 'text-muted'}>
                {b.openAlarms ? `${b.openAlarms} open alarm${b.openAlarms > 1 ? 's' : ''}` : 'no open alarms'}
              </span>
              <span className="text-muted">
                {b.activeRun ? (
                  <>
                    <a className="text-ink hover:underline" href={`/runs/${b.activeRun.id}`}>{b.activeRun.title}</a> · {b.activeRun.startedBy?.name ?? 'someone'}
                  </>
                ) : (
                  'no active run'
                )}
              </span>
            </div>
          </li>
        );
      })}
    </ul>
  );
}
