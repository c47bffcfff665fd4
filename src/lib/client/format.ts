// Number formatting for readouts: fixed significant figures so digits do not jump, SI prefixes
// for rates, and a value with its uncertainty rounded to the uncertainty's precision.

const DASH = '–';

/** Counts per second as e.g. "36.2 k/s"; "–" when absent. */
export function formatRate(r: number | null | undefined): string {
  if (r == null || !Number.isFinite(r)) return DASH;
  const a = Math.abs(r);
  if (a >= 1e6) return `${(r / 1e6).toFixed(2)} M/s`;
  if (a >= 1e4) return `${(r / 1e3).toFixed(1)} k/s`;
  if (a >= 1e3) return `${(r / 1e3).toFixed(2)} k/s`;
  return `${r.toFixed(a >= 100 ? 0 : 1)} /s`;
}

/** Decimals that show the uncertainty with two significant digits (at most 6). */
function decimalsFor(err: number): number {
  if (!(err > 0) || !Number.isFinite(err)) return 3;
  return Math.min(6, Math.max(0, 1 - Math.floor(Math.log10(err))));
}

/** "0.9712 ± 0.0031"; "–" when absent. */
export function formatValueErr(v: { value: number; err: number } | null | undefined, fixedDecimals?: number): string {
  if (!v || !Number.isFinite(v.value)) return DASH;
  const d = fixedDecimals ?? decimalsFor(v.err);
  return `${v.value.toFixed(d)} ± ${Number.isFinite(v.err) ? v.err.toFixed(d) : '?'}`;
}

export function formatNumber(v: number | null | undefined, decimals: number): string {
  return v == null || !Number.isFinite(v) ? DASH : v.toFixed(decimals);
}

/** Local time of day with seconds, e.g. "14:03:27". */
export function formatClock(ms: number): string {
  return new Date(ms).toLocaleTimeString(undefined, { hour: '2-digit', minute: '2-digit', second: '2-digit', hour12: false });
}

/** Local date and time, e.g. "2026-05-01 14:03". */
export function formatDateTime(ms: number): string {
  const d = new Date(ms);
  const p = (n: number) => String(n).padStart(2, '0');
  return `${d.getFullYear()}-${p(d.getMonth() + 1)}-${p(d.getDate())} ${p(d.getHours())}:${p(d.getMinutes())}`;
}

/** A duration in ms as "3 h 12 min", "4 min 05 s" or "12 s". */
export function formatDuration(ms: number): string {
  const s = Math.max(0, Math.round(ms / 1000));
  if (s >= 3600) return `${Math.floor(s / 3600)} h ${String(Math.floor((s % 3600) / 60)).padStart(2, '0')} min`;
  if (s >= 60) return `${Math.floor(s / 60)} min ${String(s % 60).padStart(2, '0')} s`;
  return `${s} s`;
}
