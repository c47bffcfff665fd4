// Keep a run from retention's trimming, or let it go: the run's raw bins and sums then stay however
// old they get. Operators change it; everyone sees it.
import { useState } from 'react';
import { errorText, setRunKeep } from '../../lib/client/api.ts';

export default function KeepToggle(props: { runId: number; keep: boolean; canOperate: boolean }) {
  const [keep, setKeep] = useState(props.keep);
  const [busy, setBusy] = useState(false);
  const [error, setError] = useState<string | null>(null);
  if (!props.canOperate) return keep ? <p className="text-sm text-muted" data-testid="run-keep">Kept: retention never trims this run.</p> : null;
  const toggle = async () => {
    setBusy(true);
    setError(null);
    try {
      setKeep((await setRunKeep(props.runId, !keep)).keep);
    } catch (err) {
      setError(errorText(err));
    } finally {
      setBusy(false);
    }
  };
  return (
    <div className="flex flex-wrap items-center gap-2 text-sm">
      <button type="button" className="btn" disabled={busy} aria-pressed={keep} onClick={() => void toggle()} data-testid="run-keep">
        {keep ? 'Kept from trimming · release' : 'Keep from trimming'}
      </button>
      {error && <span className="text-bad" role="alert">{error}</span>}
    </div>
  );
}
