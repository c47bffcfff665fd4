// One request per change of its inputs, with the loading and error states every island shows;
// a newer request aborts the one in flight so a slow answer never overwrites a newer one.
import { useEffect, useState } from 'react';
import { errorText } from './api.ts';

export interface Fetched<T> {
  data: T | null;
  loading: boolean;
  error: string | null;
}

export function useFetched<T>(load: (signal: AbortSignal) => Promise<T>, deps: readonly unknown[]): Fetched<T> {
  const [state, setState] = useState<Fetched<T>>({ data: null, loading: true, error: null });
  useEffect(() => {
    const ctl = new AbortController();
    setState((s) => ({ ...s, loading: true, error: null }));
    load(ctl.signal).then(
      (data) => setState({ data, loading: false, error: null }),
      (err: unknown) => {
        if (!ctl.signal.aborted) setState((s) => ({ ...s, loading: false, error: errorText(err) }));
      },
    );
    return () => ctl.abort();
    // The caller names what the request depends on, as with useEffect.
  }, deps);
  return state;
}
