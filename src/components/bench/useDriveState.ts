// What the piezo is doing now, read off the tracker twice a second by the component that shows it,
// so only that line re-renders, not the page around it.
import { useEffect, useState } from 'react';
import type { DriveState, DriveTracker } from '../../lib/client/drive-state.ts';

const READ_EVERY_MS = 500;

export function useDriveState(tracker: DriveTracker): DriveState {
  const [s, setState] = useState<DriveState>({ kind: 'unknown' });
  useEffect(() => {
    const t = setInterval(() => setState(tracker.state(Date.now())), READ_EVERY_MS);
    return () => clearInterval(t);
  }, [tracker]);
  return s;
}
