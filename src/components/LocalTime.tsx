// A moment in the reader's local time, inside an island (use-hydrated.ts says why it is empty
// until the island hydrates; the instant itself is in the element from the start).
import { formatClock, formatDateTime } from '../lib/client/format.ts';
import { useHydrated } from '../lib/client/use-hydrated.ts';

export function LocalTime({ ms, as, className }: { ms: number; as: 'clock' | 'minute' | 'second'; className?: string }) {
  const hydrated = useHydrated();
  const text = as === 'clock' ? formatClock(ms) : formatDateTime(ms, as === 'second');
  return (
    <time dateTime={new Date(ms).toISOString()} className={className}>
      {hydrated ? text : ''}
    </time>
  );
}
