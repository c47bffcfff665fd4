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
