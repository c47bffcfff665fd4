// Number formatting for readouts: fixed significant figures so digits do not jump, SI prefixes
// for rates, and a value with its uncertainty rounded to the uncertainty's precision. Pure, so
// server-rendered pages (run report, runs list) format exactly as the islands do.
import type { BenchFigures } from '../bench-figures.ts';
import { formatWindow } from '../coincidence-window.ts';

const DASH = '–';

/** Scale of a rate: counts/s below 10³, then kc/s and Mc/s (kilo-, mega-counts per second). */
function rateScale(r: number): { div: number; unit: string } {
  const a = Math.abs(r);
  if (a >= 1e6) return { div: 1e6, unit: 'Mc/s' };
  if (a >= 1e3) return { div: 1e3, unit: 'kc/s' };
  return { div: 1, unit: 'counts/s' };
}

/** A rate split for a readout: the number large, the unit beside it; "–" and no unit when absent. */
export function rateParts(r: number | null | undefined): { value: string; unit: string } {
  if (r == null || !Number.isFinite(r)) return { value: DASH, unit: '' };
  const { div, unit } = rateScale(r);
  const scaled = r / div;
  // Decimals fixed per decade, so the digits of a live readout stay put from update to update.
  const decimals = div === 1 ? (Math.abs(r) >= 100 ? 0 : 1) : Math.abs(scaled) >= 100 ? 1 : 2;
  return { value: scaled.toFixed(decimals), unit };
}

/** Counts per second as e.g. "36.21 kc/s"; "–" when absent. */
export function formatRate(r: number | null | undefined): string {
  const p = rateParts(r);
  return p.unit ? `${p.value} ${p.unit}` : p.value;
}

/**
 * A rate with its uncertainty on one scale, e.g. "36.21 ± 0.05 kc/s"; `like` picks the scale of
 * another rate shown beside it, and the unit is left off when it is that one's.
 */
export function formatRateErr(v: { value: number; err: number } | null | undefined, like?: number): string {
  if (!v || !Number.isFinite(v.value)) return DASH;
  const { div, unit } = rateScale(like ?? v.value);
  const text = formatValueErr({ value: v.value / div, err: v.err / div });
  return like === undefined ? `${text} ${unit}` : text;
}

/** Axis ticks of a counts/s axis (the unit is in the axis label): "0", "500", "1.5 k", "200 k", "1.2 M". */
export function formatRateTick(r: number | null | undefined): string {
  if (r == null || !Number.isFinite(r)) return '';
  const { div, unit } = rateScale(r);
  const n = Number((r / div).toPrecision(3));
  return div === 1 ? String(n) : `${n} ${unit[0]}`;
}

/** Decimals that show the uncertainty with two significant digits (at most 6). */
function decimalsFor(err: number): number {
  if (!(err > 0) || !Number.isFinite(err)) return 3;
  return Math.min(6, Math.max(0, 1 - Math.floor(Math.log10(err))));
}

const NBSP = '\u00a0';

/** Between a value and its uncertainty: no-break spaces, so a narrow column never puts "± 0.0008" on a line of its own. */
export const PLUS_MINUS = `${NBSP}±${NBSP}`;

/** "0.9712 ± 0.0031"; "–" when absent. */
export function formatValueErr(v: { value: number; err: number } | null | undefined, fixedDecimals?: number): string {
  if (!v || !Number.isFinite(v.value)) return DASH;
  const d = fixedDecimals ?? decimalsFor(v.err);
  return `${formatNumber(v.value, d)}${PLUS_MINUS}${Number.isFinite(v.err) ? v.err.toFixed(d) : '?'}`;
}

/** A number at fixed decimals, negative with a true minus sign like every other figure on screen. */
export function formatNumber(v: number | null | undefined, decimals: number): string {
  return v == null || !Number.isFinite(v) ? DASH : v.toFixed(decimals).replace(/^-/, '−');
}

/** Local time of day with seconds, e.g. "14:03:27". */
export function formatClock(ms: number): string {
  return new Date(ms).toLocaleTimeString(undefined, { hour: '2-digit', minute: '2-digit', second: '2-digit', hour12: false });
}

/** A moment before `now`: its time of day with seconds when it was the same local day, else its date and time. */
export function formatPastMoment(ms: number, now: number): string {
  return new Date(ms).toDateString() === new Date(now).toDateString() ? formatClock(ms) : formatDateTime(ms);
}

/** What "silent" means beside a gateway's name (its status says online, but nothing comes). */
export const SILENT_TITLE = 'Its status says online, but nothing has arrived from it for longer than a working gateway is ever quiet: its connection or its counter may have died.';

/** Local date and time, e.g. "2026-05-01 14:03" (with seconds: "2026-05-01 14:03:27"). */
export function formatDateTime(ms: number, withSeconds = false): string {
  const d = new Date(ms);
  const p = (n: number) => String(n).padStart(2, '0');
  return `${d.getFullYear()}-${p(d.getMonth() + 1)}-${p(d.getDate())} ${p(d.getHours())}:${p(d.getMinutes())}${withSeconds ? `:${p(d.getSeconds())}` : ''}`;
}

/** formatDateTime's shape in UTC, marked so, for text written where the reader's time zone is unknown (API errors). */
export function formatUtcDateTime(ms: number): string {
  return `${new Date(ms).toISOString().slice(0, 19).replace('T', ' ')} UTC`;
}

/**
 * `YYYY-MM-DD HH:MM[:SS]` (a `T` also separates) in local time → ms; null unless it names a real
 * local time. The inverse of formatDateTime, for typed time fields: datetime-local inputs show the
 * browser's locale (12-hour US dates, say) beside the app's 24 h times.
 */
export function parseLocalInput(text: string): number | null {
  const m = /^\s*(\d{4})-(\d{2})-(\d{2})[ T](\d{2}):(\d{2})(?::(\d{2}))?\s*$/.exec(text);
  if (!m) return null;
  const [y, mo, d, h, mi, s] = m.slice(1).map((x) => (x === undefined ? 0 : Number(x))) as [number, number, number, number, number, number];
  const date = new Date(y, mo - 1, d, h, mi, s);
  // Date rolls 30 February over to March and a clock-change gap to the next hour: refuse those.
  const same = date.getFullYear() === y && date.getMonth() === mo - 1 && date.getDate() === d && date.getHours() === h && date.getMinutes() === mi && date.getSeconds() === s;
  return same ? date.getTime() : null;
}

/** A duration in ms as "3 h 12 min", "4 min 05 s" or "12 s". */
export function formatDuration(ms: number): string {
  const s = Math.max(0, Math.round(ms / 1000));
  if (s >= 3600) return `${Math.floor(s / 3600)} h ${String(Math.floor((s % 3600) / 60)).padStart(2, '0')} min`;
  if (s >= 60) return `${Math.floor(s / 60)} min ${String(s % 60).padStart(2, '0')} s`;
  return `${s} s`;
}

/**
 * The figures attached to a note, as the bench page showed them when it was taken, a line each for
 * the fringe (output rates, V, φ), the light (α with a herald, else g²(0); each output's Mandel
 * Q) and the phase noise against the shot-noise limit while the drive held. A figure the snapshot
 * lacks (none then, or stored before it existed) is left out, and so is a line with none.
 */
export function snapshotLines(s: BenchFigures): string[] {
  // A figure never wraps inside itself ("φ" on one line, its value on the next): lines break
  // between figures only.
  const whole = (text: string) => text.replaceAll(' ', NBSP);
  const outputs = s.channels.filter((c) => c.role === 'out_a' || c.role === 'out_b');
  const fringe = outputs.map((c) => whole(`${c.label} ${formatRate(c.rateRaw)}`));
  if (s.visibility) fringe.push(whole(`V ${formatValueErr(s.visibility)}${s.visibility.net ? ' net' : ''}`));
  if (s.phase) fringe.push(whole(`φ ${formatValueErr(s.phase)} rad`));
  // Why φ and the phase noise are missing: they are read only while the drive holds still.
  if (s.holding === false) fringe.push(whole('drive moving'));
  const light: string[] = [];
  // A heralded bench is judged by α (its figures carry no g²(0)); a laser bench by g²(0).
  if (s.alpha) light.push(whole(`heralded α ${formatValueErr(s.alpha)}`));
  if (s.g2) light.push(whole(`g²(0) ${formatValueErr(s.g2)}${s.coincidenceWindowNs !== undefined ? ` (${formatWindow(s.coincidenceWindowNs)})` : ''}`));
  const q = outputs.filter((c) => c.mandelQ);
  if (q.length) light.push(`Mandel${NBSP}Q:${NBSP}${q.map((c) => whole(`${c.label} ${formatValueErr(c.mandelQ)}`)).join(', ')}`);
  const noise: string[] = [];
  const sn = s.shotNoise;
  if (sn && s.holding !== false) {
    const ratio = sn.ratioErr !== undefined ? formatValueErr({ value: sn.ratio, err: sn.ratioErr }) : sn.ratio.toFixed(2);
    noise.push(`${whole(`phase noise ${ratio} × shot noise:`)} ${whole(`${(sn.measuredRad * 1000).toFixed(2)} against ${(sn.limitRad * 1000).toFixed(2)} mrad${sn.binMs ? ` per ${sn.binMs} ms bin` : ''}${sn.bins !== undefined && sn.binMs ? ` over ${formatNumber((sn.bins * sn.binMs) / 1000, 0)} s` : ''}`)}`);
  }
  return [fringe, light, noise].filter((l) => l.length > 0).map((l) => l.join(' · '));
}
