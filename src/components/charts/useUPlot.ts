// One uPlot per chart, created in an effect on a container ref, sized to the container, and
// rebuilt with fresh colours when the theme changes (uPlot bakes colours into its options).
import { useEffect, useRef, type RefObject } from 'react';
import uPlot from 'uplot';
import 'uplot/dist/uPlot.min.css';
import { onThemeChange, readPalette, type ChartPalette } from '../../lib/client/chart-theme.ts';

export type ChartOptions = Omit<uPlot.Options, 'width' | 'height'>;

/**
 * `build` makes the options from the palette; `getData` supplies the data to start from (also
 * after a theme rebuild). The returned ref holds the live plot, or null before mount.
 */
export function useUPlot(
  container: RefObject<HTMLDivElement | null>,
  build: (p: ChartPalette) => ChartOptions,
  getData: () => uPlot.AlignedData,
  height: number,
  rebuildKey: unknown = null,
): RefObject<uPlot | null> {
  const plot = useRef<uPlot | null>(null);
  const buildRef = useRef(build);
  const dataRef = useRef(getData);
  buildRef.current = build;
  dataRef.current = getData;

  useEffect(() => {
    const el = container.current;
    if (!el) return;
    const create = () => {
      plot.current?.destroy();
      const width = Math.max(200, el.clientWidth);
      plot.current = new uPlot({ ...buildRef.current(readPalette()), width, height }, dataRef.current(), el);
    };
    create();
    const offTheme = onThemeChange(create);
    // Follow the container's width (tablet rotation, rail collapsing).
    let lastWidth = el.clientWidth;
    const ro = new ResizeObserver(() => {
      const w = el.clientWidth;
      if (w > 0 && Math.abs(w - lastWidth) > 2) {
        lastWidth = w;
        plot.current?.setSize({ width: Math.max(200, w), height });
      }
    });
    ro.observe(el);
    return () => {
      offTheme();
      ro.disconnect();
      plot.current?.destroy();
      plot.current = null;
    };
  }, [container, height, rebuildKey]);

  return plot;
}

/** Axis styling shared by every chart: muted ticks and grid on the theme's line colour. */
export function axis(p: ChartPalette, extra: uPlot.Axis = {}): uPlot.Axis {
  return {
    stroke: p.muted,
    grid: { stroke: p.line, width: 1 },
    ticks: { stroke: p.line, width: 1 },
    font: '11px "Roboto Mono", ui-monospace, monospace',
    labelFont: '12px Inter, ui-sans-serif, sans-serif',
    ...extra,
  };
}

// Time-axis labels on a 24-hour clock with day-month dates (uPlot's default is a 12-hour clock and
// month/day/year, easy to misread in a lab log). Rows: [smallest tick step (s), tick label, then the
// second line added at the first tick and where the year, month, day, hour, minute or second
// changes, mode]; see uPlot's axes docs. Second lines stay as short as the tick labels ("1 Dec",
// "23:51"): a long first one ("1 Dec 2026 23:50") ran into the next minute's on narrow charts.
// The full date and time of any point is in the legend.
const TIME_24H: (string | number | null)[][] = [
  [31_536_000, '{YYYY}', null, null, null, null, null, null, 1],
  [2_419_200, '{MMM}', '\n{YYYY}', null, null, null, null, null, 1],
  [86_400, '{D} {MMM}', '\n{YYYY}', null, null, null, null, null, 1],
  [3_600, '{HH}:{mm}', '\n{D} {MMM}', null, '\n{D} {MMM}', null, null, null, 1],
  [60, '{HH}:{mm}', '\n{D} {MMM}', null, '\n{D} {MMM}', null, null, null, 1],
  [1, ':{ss}', '\n{HH}:{mm}', null, '\n{HH}:{mm}', null, '\n{HH}:{mm}', null, 1],
  [0.001, ':{ss}.{fff}', '\n{HH}:{mm}', null, '\n{HH}:{mm}', null, '\n{HH}:{mm}', null, 1],
];

/** The x axis of a time chart (x in seconds since the epoch). */
export function timeAxis(p: ChartPalette, extra: uPlot.Axis = {}): uPlot.Axis {
  return axis(p, { values: TIME_24H, ...extra });
}

/** The hovered time in a legend, on the same 24-hour clock: "2026-05-01 14:03:27". */
export function timeLegendValue(_u: uPlot, v: number | null): string {
  if (v == null) return '–';
  const d = new Date(v * 1000);
  const p = (n: number) => String(n).padStart(2, '0');
  return `${d.getFullYear()}-${p(d.getMonth() + 1)}-${p(d.getDate())} ${p(d.getHours())}:${p(d.getMinutes())}:${p(d.getSeconds())}`;
}
