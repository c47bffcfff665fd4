// A banner for alarms that are raised and nobody has acknowledged yet, above everything else on
// the live view: the operator may be watching the fringes, not the list further down.
import { ruleLabel, type AlarmEventView } from '../../lib/alarm-messages.ts';
import { LocalTime } from '../LocalTime.tsx';

export function needsAttention(e: AlarmEventView): boolean {
  return e.clearedAt === null && e.ackedAt === null;
}

export function AlarmBanner({ events }: { events: AlarmEventView[] }) {
  const open = events.filter(needsAttention);
  if (open.length === 0) return null;
  const critical = open.some((e) => e.severity === 'critical');
  return (
    <div role="alert" data-testid="alarm-banner" className={`rounded-md border-l-4 bg-sunken px-3 py-2 text-sm ${critical ? 'border-bad' : 'border-warn'}`}>
      <p className={`font-semibold ${critical ? 'text-bad' : 'text-warn'}`}>
        {open.length === 1 ? '1 alarm raised, not acknowledged' : `${open.length} alarms raised, not acknowledged`}
        {' · '}
        <a href="#alarms" className="text-ink underline">see alarms</a>
      </p>
      <ul className="mt-1 space-y-0.5">
        {open.slice(0, 3).map((e) => (
          <li key={e.id} className="text-ink">
            <LocalTime ms={Date.parse(e.raisedAt)} as="clock" className="figure text-muted" /> {ruleLabel(e.ruleName, e.ruleId === null)}: <span className="figure">{e.message}</span>
          </li>
        ))}
        {open.length > 3 && <li className="text-muted">and {open.length - 3} more</li>}
      </ul>
    </div>
  );
}
