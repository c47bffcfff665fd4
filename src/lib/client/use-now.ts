// The current time for elapsed-time text in islands: null until the island has mounted, because
// the server's render and the browser's first render must produce the same text (React hydration),
// and their clocks never agree to the second. With `everyMs` it ticks.
import { useEffect, useState } from 'react';

export function useNow(everyMs?: number): number | null {
  const [now, setNow] = useState<number | null>(null);
  useEffect(() => {
    setNow(Date.now());
    if (!everyMs) return;
    const t = setInterval(() => setNow(Date.now()), everyMs);
    return () => clearInterval(t);
  }, [everyMs]);
  return now;
}
