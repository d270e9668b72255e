import { useEffect, useState } from 'react';

/** The product's fixed hues (see the look of Millrace): accent, highlight and the four states. */
export const HUES = {
  gallium: '#5B7C99',
  copper: '#B8734A',
  nominal: '#2F8F6B',
  caution: '#C98A00',
  warning: '#C23B22',
  stale: '#8A8F98',
} as const;

/** Colours of a chart in the current theme, read from the page's CSS variables. */
export interface ChartColours {
  ink: string;
  muted: string;
  rule: string;
  panel: string;
  /** A second data colour beside gallium: ink in light theme, a pale gallium in dark. */
  second: string;
}

// The same values as the theme's CSS variables (styles/global.css), fixed here so that the server's
// render and the browser's first render agree.
const THEMES: Record<'light' | 'dark', ChartColours> = {
  light: { ink: 'rgb(27, 36, 48)', muted: 'rgb(96, 105, 117)', rule: 'rgb(221, 218, 208)', panel: 'rgb(255, 255, 253)', second: '#1B2430' },
  dark: { ink: 'rgb(228, 226, 219)', muted: 'rgb(150, 158, 168)', rule: 'rgb(52, 62, 75)', panel: 'rgb(29, 37, 47)', second: '#C9D6E2' },
};

/** The chart colours of a theme. */
export function chartColours(theme: 'light' | 'dark'): ChartColours {
  return THEMES[theme];
}

/** The page's theme, following the theme toggle. */
export function useThemeName(): 'light' | 'dark' {
  const read = () => (typeof document !== 'undefined' && document.documentElement.dataset.theme === 'dark' ? 'dark' : 'light');
  const [theme, setTheme] = useState<'light' | 'dark'>('light');
  useEffect(() => {
    setTheme(read());
    const mo = new MutationObserver(() => setTheme(read()));
    mo.observe(document.documentElement, { attributes: true, attributeFilter: ['data-theme'] });
    return () => mo.disconnect();
  }, []);
  return theme;
}

/** A callback ref and the width of its element, following resizes. */
export function useWidth<T extends HTMLElement>(): [(el: T | null) => void, number] {
  const [el, setEl] = useState<T | null>(null);
  const [w, setW] = useState(0);
  useEffect(() => {
    if (!el) return;
    setW(el.clientWidth);
    const ro = new ResizeObserver(() => setW(el.clientWidth));
    ro.observe(el);
    return () => ro.disconnect();
  }, [el]);
  return [setEl, w];
}

/** Hex colour with an alpha, for fills. */
export function alpha(hex: string, a: number): string {
  const n = parseInt(hex.slice(1), 16);
  return `rgba(${(n >> 16) & 255}, ${(n >> 8) & 255}, ${n & 255}, ${a})`;
}

/** Colour of a value in [0, 1] on a ramp of hex stops (linear in RGB). */
export function ramp(stops: readonly string[], x: number): string {
  const u = Math.min(1, Math.max(0, Number.isFinite(x) ? x : 0)) * (stops.length - 1);
  const i = Math.min(stops.length - 2, Math.floor(u));
  const f = u - i;
  const a = parseInt(stops[i]!.slice(1), 16), b = parseInt(stops[i + 1]!.slice(1), 16);
  const mix = (s: number) => Math.round(((a >> s) & 255) * (1 - f) + ((b >> s) & 255) * f);
  return `rgb(${mix(16)}, ${mix(8)}, ${mix(0)})`;
}

/** Magnet temperature, cool to warm. */
export const TEMP_STOPS = ['#2F5F8A', '#6E97B8', '#B9B3A2', '#D08F5C', '#A24E22'] as const;
/** Spectral power, low to high. */
export const HEAT_STOPS = ['#121a24', '#263f58', '#4f7393', '#9c8f7c', '#d9a56f', '#f6ead2'] as const;
