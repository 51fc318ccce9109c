/** Small helpers shared by the SVG figures: escaping, number formatting, axis ticks, colours. */

export function esc(s: string): string {
  return s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
}

/** A coordinate for SVG markup: at most 2 decimals. */
export function px(x: number): string {
  return (Math.round(x * 100) / 100).toString();
}

/** A tick label: short, without float noise. */
export function label(x: number): string {
  if (x === 0) return '0';
  const a = Math.abs(x);
  if (a >= 1e5 || a < 1e-3) return x.toExponential(1);
  return Number(x.toPrecision(4)).toString();
}

/** Round tick values covering [lo, hi]: steps of 1, 2 or 5 × 10^k, about `count` of them. */
export function ticks(lo: number, hi: number, count = 6): number[] {
  if (!(hi > lo)) return Number.isFinite(lo) ? [lo] : [];
  const raw = (hi - lo) / Math.max(1, count);
  const mag = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 5, 10].map((m) => m * mag).find((s) => s >= raw) ?? 10 * mag;
  const out: number[] = [];
  for (let k = Math.ceil(lo / step - 1e-9); k * step <= hi + 1e-9 * step; k++) out.push(Number((k * step).toPrecision(12)));
  return out;
}

/** Our energy ramp, low → high: deep sea blue through teal and pale sand to a brick red. */
const RAMP: [number, number, number][] = [
  [18, 53, 91], [31, 111, 139], [63, 163, 154], [159, 211, 163], [241, 233, 182], [232, 179, 109], [200, 85, 61],
];

/** Colour of t ∈ [0, 1] on the energy ramp, as #rrggbb. */
export function rampColour(t: number): string {
  const u = Math.min(1, Math.max(0, t)) * (RAMP.length - 1);
  const k = Math.min(RAMP.length - 2, Math.floor(u)), f = u - k;
  const c = RAMP[k].map((a, i) => Math.round(a + f * (RAMP[k + 1][i] - a)));
  return '#' + c.map((v) => v.toString(16).padStart(2, '0')).join('');
}

export const INK = '#22313f';
export const FAINT = '#dfe5ea';
export const MINIMUM_FILL = '#ffffff';
export const SADDLE_FILL = '#d1495b';
export const FONT = 'font-family="system-ui, -apple-system, Segoe UI, Helvetica, Arial, sans-serif"';

/** Unit label for axis titles. */
export function unitLabel(unit: string): string {
  return unit === 'none' ? '' : ` (${unit})`;
}
