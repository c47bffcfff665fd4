// The bench view's subscription to the live socket. The socket itself (connection, back-off,
// resume after a drop) belongs to src/lib/client/live-socket.ts; this hook only routes messages.
// TODO: subscribe through live-socket.ts once it lands; until then the view shows the backfill only.
import { useState } from 'react';
import type { CountsMessage } from '../../lib/live-messages.ts';

export interface LiveFeedState {
  status: 'connecting' | 'open' | 'closed';
  /** Whether the socket was open at least once (a later drop is a lost connection, not a start). */
  everOpen: boolean;
  /** When the next reconnection attempt is due, ms since the epoch. */
  retryAt: number | null;
}

export interface LiveHandlers {
  onCounts: (m: CountsMessage) => void;
  onMessage: (m: { type: string; [k: string]: unknown }) => void;
}

export function useLiveFeed(_bench: string, _handlers: LiveHandlers): LiveFeedState {
  const [state] = useState<LiveFeedState>({ status: 'connecting', everOpen: false, retryAt: null });
  return state;
}
