// Whether the island has hydrated. Local times of day are the reader's, and the server renders in
// its own time zone, so text holding one is left out of the server's render and of hydration's
// first pass (which must match it) and filled in by the render right after.
import { useSyncExternalStore } from 'react';

const noSubscribe = () => () => undefined;

export function useHydrated(): boolean {
  return useSyncExternalStore(
    noSubscribe,
    () => true,
    () => false,
  );
}
