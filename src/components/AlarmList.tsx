// A bench's alarms, kept current from the live socket, with acknowledgement for operators.
// Drop it on any bench screen: <AlarmList client:load benchId=… initial={…} canAck={…} />.
import { useEffect, useState } from 'react';
import { alarmEventViewSchema, alarmMessageSchema, applyAlarmMessage, ruleLabel, type AlarmEventView } from '../lib/alarm-messages.ts';
import { liveSocket, statusSocket } from '../lib/client/live-socket.ts';
import { LocalTime } from './LocalTime.tsx';

interface Props {
  benchId: string;
  initial: AlarmEventView[];
  canAck: boolean;
  /** Only events still raised (the banner); otherwise the recent history too. */
  openOnly?: boolean;
  /**
   * On a page showing several benches (the lab overview): the alarms come over the page's one
   * status-only socket, which it shares, instead of a socket streaming this bench's counts.
   */
  viaStatusSocket?: boolean;
}

const SEVERITY_CLASS: Record<AlarmEventView['severity'], string> = {
  critical: 'border-bad text-bad',
  warning: 'border-warn text-warn',
  info: 'border-line text-muted',
};

function When({ iso }: { iso: string }) {
  return <LocalTime ms={Date.parse(iso)} as="minute" />;
}

async function ack(benchId: string, id: number, comment: string): Promise<AlarmEventView> {
  const res = await fetch(`/api/v1/benches/${encodeURIComponent(benchId)}/alarms/${id}/ack`, {
    method: 'POST',
    headers: { 'content-type': 'application/json', accept: 'application/json' },
    body: JSON.stringify({ comment }),
  });
  const body: unknown = await res.json().catch(() => null);
  if (!res.ok) throw new Error(body && typeof body === 'object' && 'error' in body ? String(body.error) : `HTTP ${res.status}`);
  return alarmEventViewSchema.parse(body);
}

function AckForm({ benchId, event, onDone }: { benchId: string; event: AlarmEventView; onDone: (e: AlarmEventView) => void }) {
  const [comment, setComment] = useState('');
  const [error, setError] = useState<string | null>(null);
  const [busy, setBusy] = useState(false);
  const id = `ack-${event.id}`;
  return (
    <form
      className="mt-2 flex flex-wrap items-end gap-2"
      onSubmit={(e) => {
        e.preventDefault();
        setBusy(true);
        setError(null);
        ack(benchId, event.id, comment)
          .then(onDone, (err: unknown) => setError(err instanceof Error ? err.message : 'failed'))
          .finally(() => setBusy(false));
      }}
    >
      <div className="min-w-56 flex-1">
        <label className="label" htmlFor={id}>
          What was done or seen
        </label>
        <input id={id} className="field" value={comment} onChange={(e) => setComment(e.target.value)} required maxLength={2000} />
      </div>
      <button className="btn" type="submit" disabled={busy || !comment.trim()}>
        Acknowledge
      </button>
      {error && (
        <p role="alert" className="w-full text-sm text-bad">
          {error}
        </p>
      )}
    </form>
  );
}

export default function AlarmList({ benchId, initial, canAck, openOnly = false, viaStatusSocket = false }: Props) {
  const [events, setEvents] = useState<AlarmEventView[]>(initial);
  useEffect(
    () =>
      (viaStatusSocket ? statusSocket() : liveSocket(benchId)).subscribe((m) => {
        if (m.type !== 'alarm' || m.bench !== benchId) return;
        const parsed = alarmMessageSchema.safeParse(m);
        if (parsed.success) setEvents((list) => applyAlarmMessage(list, parsed.data));
      }),
    [benchId, viaStatusSocket],
  );
  const shown = openOnly ? events.filter((e) => e.clearedAt === null) : events;
  if (shown.length === 0) return <p className="text-sm text-muted">{openOnly ? 'No alarm is raised.' : 'No alarms yet.'}</p>;
  return (
    <ul className="flex flex-col gap-2" aria-label="Alarms" aria-live="polite">
      {shown.map((e) => (
        <li key={e.id} className={`rounded-md border-l-4 bg-panel px-3 py-2 ${SEVERITY_CLASS[e.severity]}`}>
          <div className="flex flex-wrap items-baseline justify-between gap-2">
            <span className="font-semibold">
              {e.severity.toUpperCase()} · {ruleLabel(e.ruleName, e.ruleId === null)}
            </span>
            <span className="text-xs text-muted">
              {e.clearedAt ? <>cleared <When iso={e.clearedAt} /></> : <strong className="text-ink">raised <When iso={e.raisedAt} /></strong>}
            </span>
          </div>
          <p className="figure text-sm text-ink">{e.message}</p>
          {e.ackedAt ? (
            <p className="text-xs text-muted">
              Acknowledged by {e.ackedBy ?? 'someone'} at <When iso={e.ackedAt} />: {e.ackComment}
            </p>
          ) : canAck ? (
            <AckForm benchId={benchId} event={e} onDone={(v) => setEvents((list) => list.map((x) => (x.id === v.id ? v : x)))} />
          ) : (
            <p className="text-xs text-muted">Not acknowledged yet.</p>
          )}
        </li>
      ))}
    </ul>
  );
}
