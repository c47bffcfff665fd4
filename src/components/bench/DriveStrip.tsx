// The drive at a glance, pinned to the top of the live view while the page scrolls: where the
// piezo is, whether it moves, and for operators a Stop, so a sweep is stopped from beside the
// fringes without scrolling down to the Drive card. Scans are started only in the card, where the
// laser and high-voltage caution is; stopping needs no caution. The Stop is always shown to an
// operator, holding or not, so it is always in the same place.
import { useEffect, useState } from 'react';
import type { DriveTracker } from '../../lib/client/drive-state.ts';
import { sendDriveCommand, type CommandOutcome } from '../../lib/client/drive-command.ts';
import { useDriveState } from './useDriveState.ts';

/** How long "sent" stays beside the Stop, ms; a refusal stays until the next try. */
const SENT_SHOWN_MS = 8_000;

export function DriveStrip(props: { benchId: string; tracker: DriveTracker; canOperate: boolean }) {
  const s = useDriveState(props.tracker);
  const [busy, setBusy] = useState(false);
  const [message, setMessage] = useState<CommandOutcome | null>(null);

  useEffect(() => {
    if (!message?.ok) return;
    const t = setTimeout(() => setMessage(null), SENT_SHOWN_MS);
    return () => clearTimeout(t);
  }, [message]);

  const stop = async () => {
    setBusy(true);
    setMessage(null);
    setMessage(await sendDriveCommand(props.benchId, { op: 'stop' }, 'Stop'));
    setBusy(false);
  };

  const moving = s.kind === 'moving';
  return (
    <section
      aria-label="Drive status"
      data-testid="drive-strip"
      className={`no-print sticky top-0 z-20 flex flex-wrap items-center gap-x-3 gap-y-1 rounded-md border bg-panel px-3 py-1.5 text-sm shadow-sm ${moving ? 'border-accent' : 'border-line'}`}
    >
      <span className="font-semibold">Drive</span>
      <span data-testid="drive-strip-state">
        {s.kind === 'unknown' ? (
          <span className="text-muted">position not reported lately</span>
        ) : (
          <>
            <span className={moving ? 'font-medium text-accent' : 'text-muted'}>{s.kind === 'moving' ? `moving ${s.way}` : 'holding'}</span>
            {' at '}
            <span className="figure font-medium">{s.x.toFixed(3)} V</span>
          </>
        )}
      </span>
      {message && (
        <span role="status" className={message.ok ? 'text-good' : 'text-bad'} data-testid="drive-strip-message">
          {message.text}
        </span>
      )}
      <span className="ml-auto flex items-center gap-3">
        {/* On a phone the operator's strip keeps to one line: the state and the Stop, the card is a short scroll away. */}
        <a href="#drive" className={`text-muted underline hover:text-ink ${props.canOperate ? 'max-sm:hidden' : ''}`}>{props.canOperate ? 'Sweep & hold' : 'Drive details'}</a>
        {props.canOperate && (
          <button type="button" className="btn-danger !py-1" disabled={busy} onClick={() => void stop()}>
            Stop drive
          </button>
        )}
      </span>
    </section>
  );
}
