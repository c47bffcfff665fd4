// Says when the live connection is down and when the next attempt is; says nothing while it is up.
import { useEffect, useState } from 'react';
import type { LiveFeedState } from './useLiveFeed.ts';

export function LiveBanner({ state }: { state: LiveFeedState }) {
  const [now, setNow] = useState(() => Date.now());
  useEffect(() => {
    if (state.status === 'open') return;
    const t = setInterval(() => setNow(Date.now()), 1000);
    return () => clearInterval(t);
  }, [state.status]);

  if (state.status === 'open') return null;
  if (state.status === 'connecting' && !state.everOpen) {
    return <p className="text-sm text-muted" role="status">Connecting to the live feed…</p>;
  }
  const retry = state.retryAt ? Math.max(0, Math.ceil((state.retryAt - now) / 1000)) : null;
  return (
    <div role="alert" data-testid="live-banner" className="flex flex-wrap items-center gap-2 rounded-md border border-warn bg-sunken px-3 py-2 text-sm">
      <span className="font-semibold text-warn">Live connection lost.</span>
      <span className="text-ink">
        {state.status === 'connecting' ? 'Reconnecting…' : retry !== null ? `Retrying in ${retry} s.` : 'Retrying.'} Figures on screen are frozen; missed counts are fetched when it is back.
      </span>
    </div>
  );
}
