// Time spans [t0, t1) in ms, as the live resume and the late-batch refit both gather them. Pure.

/** Spans sorted by start, with overlapping or touching ones joined. */
export function joinSpans(spans: readonly (readonly [number, number])[]): [number, number][] {
  const out: [number, number][] = [];
  for (const [a, b] of [...spans].sort((p, q) => p[0] - q[0])) {
    const prev = out.at(-1);
    if (prev && a <= prev[1]) prev[1] = Math.max(prev[1], b);
    else out.push([a, b]);
  }
  return out;
}
