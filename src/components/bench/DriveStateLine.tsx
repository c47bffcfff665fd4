// One line saying what the piezo is doing now, for every role: someone walking up to the bench,
// or following it from afar, sees a drive holding at 40 V as plainly as one that sweeps. It reads
// the tracker twice a second itself, so only this line re-renders, not the page around it.
import { useEffect, useState } from 'react';
import type { DriveState, DriveTracker } from '../../lib/client/drive-state.ts';

const READ_EVERY_MS = 500;

export function DriveStateLine(props: { tracker: DriveTracker }) {
  const [s, setState] = useState<DriveState>({ kind: 'unknown' });
  useEffect(() => {
    const t = setInterval(() => setState(props.tracker.state(Date.now())), READ_EVERY_MS);
    return () => clearInterval(t);
  }, [props.tracker]);
  return (
    <p className="text-sm" role="status" aria-live="polite" data-testid="drive-state">
      <span className="text-muted">Piezo </span>
      {s.kind === 'unknown' ? (
        <span className="text-muted">position not reported lately</span>
      ) : s.kind === 'holding' ? (
        <>
          holding at <span className="figure font-medium">{s.x.toFixed(3)} V</span>
        </>
      ) : (
        <>
          moving {s.way} at <span className="figure font-medium">{s.x.toFixed(3)} V</span>
          <span className="figure text-xs text-muted"> ({s.lo.toFixed(2)}–{s.hi.toFixed(2)} V in the last 2 s)</span>
        </>
      )}
    </p>
  );
}
