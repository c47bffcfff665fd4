// Chart colours come from the theme's CSS variables (global.css), read again whenever the theme
// toggle announces a change ('fw-theme'), so both themes keep their contrast.

export interface ChartPalette {
  ink: string;
  muted: string;
  line: string;
  panel: string;
  ember: string;
  tide: string;
  herald: string;
  accent: string;
  good: string;
  warn: string;
  bad: string;
}

const NAMES: (keyof ChartPalette)[] = ['ink', 'muted', 'line', 'panel', 'ember', 'tide', 'herald', 'accent', 'good', 'warn', 'bad'];

export function readPalette(): ChartPalette {
  const style = getComputedStyle(document.documentElement);
  const out = {} as ChartPalette;
  for (const n of NAMES) out[n] = style.getPropertyValue(`--color-${n}`).trim() || '#888888';
  return out;
}

/** `#rrggbb` with an alpha (0..1) as `rgba()`, for faded series and bands. */
export function withAlpha(hex: string, alpha: number): string {
  const m = /^#([0-9a-f]{6})$/i.exec(hex);
  if (!m) return hex;
  const v = parseInt(m[1]!, 16);
  return `rgba(${(v >> 16) & 255}, ${(v >> 8) & 255}, ${v & 255}, ${alpha})`;
}

export function onThemeChange(fn: () => void): () => void {
  window.addEventListener('fw-theme', fn);
  return () => window.removeEventListener('fw-theme', fn);
}
