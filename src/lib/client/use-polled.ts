// A value read now and then every `everyMs` while its inputs stay the same; an answer that comes
// back after the inputs changed (or the island unmounted) is dropped. `load` reports its own
// failures in what it returns, so one failed poll does not blank what the last one showed.
import { useEffect, useState } from 'react';

export function usePolled<T>(load: () => Promise<T>, everyMs: number, deps: readonly unknown[]): T | null {
  const [value, setValue] = useState<T | null>(null);
  useEffect(() => {
    let stopped = false;
    const poll = async () => {
      const v = await load();
      if (!stopped) setValue(v);
    };
    void poll();
    const t = setInterval(() => void poll(), everyMs);
    return () => {
      stopped = true;
      clearInterval(t);
    };
    // The caller names what the polls depend on, as with useEffect.
  }, deps);
  return value;
}
