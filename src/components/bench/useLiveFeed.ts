// The bench view's subscription to the live socket. The socket itself (connection, back-off,
// resume after a drop) belongs to src/lib/client/live-socket.ts; this hook only routes messages:
// counts to the buffers, everything else (figures, sweeps, alarms) to the view.
import { useCallback, useEffect, useRef, useSyncExternalStore } from 'react';
import { liveSocket, type LiveSocketState } from '../../lib/client/live-socket.ts';
import type { CountsMessage } from '../../lib/live-messages.ts';

export type LiveFeedState = LiveSocketState;

export interface LiveHandlers {
  onCounts: (m: CountsMessage) => void;
  onMessage: (m: { type: string; [k: string]: unknown }) => void;
}

/**
 * What the server renders, and so what hydration must start from: the bench's socket is shared
 * with the header's island, which may have opened it before this island hydrates.
 */
const BEFORE_OPEN: LiveFeedState = { status: 'connecting', everOpen: false, retryAt: null };

export function useLiveFeed(bench: string, handlers: LiveHandlers): LiveFeedState {
  // The socket is per browser tab: never made while rendering on the server, where it would be shared by every request.
  const socket = typeof window === 'undefined' ? null : liveSocket(bench);
  const subscribeState = useCallback((changed: () => void) => socket?.onState(changed) ?? (() => undefined), [socket]);
  const state = useSyncExternalStore(subscribeState, () => socket?.state ?? BEFORE_OPEN, () => BEFORE_OPEN);
  const ref = useRef(handlers);
  ref.current = handlers;

  useEffect(() => {
    return liveSocket(bench).subscribe((m) => {
      if (m.type === 'counts') ref.current.onCounts(m as CountsMessage);
      else ref.current.onMessage(m as { type: string; [k: string]: unknown });
    });
  }, [bench]);

  return state;
}
