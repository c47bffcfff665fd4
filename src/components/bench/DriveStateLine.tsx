// One line saying what the piezo is doing now, for every role: someone walking up to the bench,
// or following it from afar, sees a drive holding at 40 V as plainly as one that sweeps.
import type { DriveTracker } from '../../lib/client/drive-state.ts';
import { useDriveState } from './useDriveState.ts';

export function DriveStateLine(props: { tracker: DriveTracker }) {
  const s = useDriveState(props.tracker);
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
