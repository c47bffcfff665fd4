// Both outputs over the last minutes as two thin lines in a small SVG: a card on the overview needs
// the shape, not axes or a cursor, and an SVG takes its colours from the theme's classes without
// a chart library rebuilding on a theme change.

export interface SparkSeries {
  /** Tailwind stroke class of the line (the output's hue). */
  className: string;
  /** counts/s per bucket, null where no bins were stored (a gap). */
  values: (number | null)[];
}

const W = 300;
const H = 44;
/** Room for the stroke at the top and bottom, px of the viewBox. */
const PAD = 2;

function path(values: (number | null)[], max: number): string {
  const n = values.length;
  let d = '';
  let pen = false;
  for (let i = 0; i < n; i++) {
    const v = values[i];
    if (v == null) {
      pen = false;
      continue;
    }
    const x = n > 1 ? (i / (n - 1)) * W : W / 2;
    const y = H - PAD - (max > 0 ? (v / max) * (H - 2 * PAD) : 0);
    d += `${pen ? 'L' : 'M'}${x.toFixed(1)} ${y.toFixed(1)}`;
    pen = true;
  }
  return d;
}

/** Both series on one scale from zero, so their heights compare as the rates do. */
export function Sparkline(props: { series: SparkSeries[]; label: string }) {
  let max = 0;
  for (const s of props.series) for (const v of s.values) if (v != null && v > max) max = v;
  return (
    <svg viewBox={`0 0 ${W} ${H}`} preserveAspectRatio="none" className="h-11 w-full rounded bg-sunken" role="img" aria-label={props.label}>
      {props.series.map((s, i) => (
        <path key={i} d={path(s.values, max * 1.05)} className={`${s.className} fill-none`} strokeWidth={1.5} vectorEffect="non-scaling-stroke" strokeLinejoin="round" />
      ))}
    </svg>
  );
}
