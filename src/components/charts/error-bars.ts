// Vertical whiskers (±1σ or an interval) under a uPlot point series (uPlot draws points and lines, not error bars).
import uPlot from 'uplot';

/**
 * A draw hook that strokes, for each point of series `seriesIdx`, a whisker from `lo(i)` to
 * `hi(i)` in the series' scale. Whisker ends outside the plot (a log axis below its floor) are
 * clipped to it.
 */
export function errorBars(seriesIdx: number, lo: (i: number) => number | null, hi: (i: number) => number | null, colour: string): (u: uPlot) => void {
  return (u) => {
    const xs = u.data[0];
    const ys = u.data[seriesIdx];
    if (!ys || !u.series[seriesIdx]?.show) return;
    const scale = u.series[seriesIdx]!.scale ?? 'y';
    const { left, top, width, height } = u.bbox;
    const ctx = u.ctx;
    const cap = 3 * uPlot.pxRatio;
    ctx.save();
    ctx.beginPath();
    ctx.rect(left, top, width, height);
    ctx.clip();
    ctx.strokeStyle = colour;
    ctx.lineWidth = uPlot.pxRatio;
    ctx.beginPath();
    for (let i = 0; i < xs.length; i++) {
      const l = lo(i);
      const h = hi(i);
      if (ys[i] == null || l == null || h == null) continue;
      const x = Math.round(u.valToPos(xs[i]!, 'x', true));
      // A non-positive lower end has no place on a log axis: run the whisker to the plot's bottom.
      const y0 = l > 0 || u.scales[scale]?.distr !== 3 ? u.valToPos(l, scale, true) : top + height;
      const y1 = u.valToPos(h, scale, true);
      ctx.moveTo(x, y0);
      ctx.lineTo(x, y1);
      ctx.moveTo(x - cap, y0);
      ctx.lineTo(x + cap, y0);
      ctx.moveTo(x - cap, y1);
      ctx.lineTo(x + cap, y1);
    }
    ctx.stroke();
    ctx.restore();
  };
}
