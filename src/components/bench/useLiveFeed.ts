// The bench view's subscription to the live socket. The socket itself (connection, back-off,
// resume after a drop) belongs to src/lib/client/live-socket.ts; this hook only routes messages:
// counts to the buffers, everything else (figures, sweeps, alarms) to the view.
import { useEffect, useRef, useState } from 'react';
import { liveSocket, type LiveSocketState } from '../../lib/client/live-socket.ts';
import type { CountsMessage } from '../../lib/live-messages.ts';

export type LiveFeedState = LiveSocketState;

export interface LiveHandlers {
  onCounts: (m: CountsMessage) => void;
  onMessage: (m: { type: string; [k: string]: unknown }) => void;
}

export function useLiveFeed(bench: string, handlers: LiveHandlers): LiveFeedState {
  const socket = liveSocket(bench);
  const [state, setState] = useState<LiveFeedState>(socket.state);
  const ref = useRef(handlers);
  ref.current = handlers;

  useEffect(() => {
    const s = liveSocket(bench);
    const offState = s.onState(setState);
    const off = s.subscribe((m) => {
      if (m.type === 'counts') ref.current.onCounts(m as CountsMessage);
      else ref.current.onMessage(m as { type: string; [k: string]: unknown });
    });
    return () => {
      off();
      offState();
    };
  }, [bench]);

  return state;
}
