/**
 * Colours: perceptually uniform ramps from d3-scale-chromatic sampled into lookup tables, and the
 * WCAG 2.x relative-luminance / contrast-ratio formulas used to check every text colour we ship.
 */
import { interpolateCividis, interpolateViridis, interpolateMagma, interpolateInferno, interpolatePlasma, interpolateGreys } from 'd3-scale-chromatic';

export type Rgb = [number, number, number];

/** Parse '#rgb', '#rrggbb' or 'rgb(r, g, b)' into 0–255 channels. */
export function parseColour(s: string): Rgb {
  const t = s.trim();
  let m = /^#([0-9a-f]{3})$/i.exec(t);
  if (m) return [0, 1, 2].map((k) => parseInt(m![1][k] + m![1][k], 16)) as Rgb;
  m = /^#([0-9a-f]{6})$/i.exec(t);
  if (m) return [0, 2, 4].map((k) => parseInt(m![1].slice(k, k + 2), 16)) as Rgb;
  m = /^rgba?\(\s*([\d.]+)[,\s]+([\d.]+)[,\s]+([\d.]+)/i.exec(t);
  if (m) return [Number(m[1]), Number(m[2]), Number(m[3])].map((v) => Math.round(v)) as Rgb;
  throw new Error(`not a colour: '${s}'`);
}

export function toHex(c: Rgb): string {
  return '#' + c.map((v) => Math.max(0, Math.min(255, Math.round(v))).toString(16).padStart(2, '0')).join('');
}

/** Relative luminance of an sRGB colour as WCAG 2.x defines it (linearised channels, 0.2126/0.7152/0.0722). */
export function relativeLuminance(c: Rgb | string): number {
  const rgb = typeof c === 'string' ? parseColour(c) : c;
  const lin = rgb.map((v) => {
    const s = v / 255;
    return s <= 0.04045 ? s / 12.92 : ((s + 0.055) / 1.055) ** 2.4;
  });
  return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2];
}

/** WCAG 2.x contrast ratio (L1 + 0.05) / (L2 + 0.05), L1 the lighter; 1 to 21. */
export function contrastRatio(a: Rgb | string, b: Rgb | string): number {
  const la = relativeLuminance(a), lb = relativeLuminance(b);
  return (Math.max(la, lb) + 0.05) / (Math.min(la, lb) + 0.05);
}

/** Blend `top` over `bottom` with opacity `alpha` (what a translucent fill shows). */
export function over(top: Rgb | string, bottom: Rgb | string, alpha: number): Rgb {
  const t = typeof top === 'string' ? parseColour(top) : top;
  const b = typeof bottom === 'string' ? parseColour(bottom) : bottom;
  return [0, 1, 2].map((k) => Math.round(t[k] * alpha + b[k] * (1 - alpha))) as Rgb;
}

/** The uniform-lightness ramps of d3-scale-chromatic (and its single-hue grey ramp). */
export type RampName = 'cividis' | 'viridis' | 'magma' | 'inferno' | 'plasma' | 'greys';
const INTERPOLATORS: Record<RampName, (t: number) => string> = {
  cividis: interpolateCividis, viridis: interpolateViridis, magma: interpolateMagma, inferno: interpolateInferno, plasma: interpolatePlasma,
  greys: interpolateGreys,
};

/** A colour ramp: the interpolator restricted to [lo, hi] of its range, sampled into 256 entries. */
export interface Ramp {
  name: RampName;
  lo: number;
  hi: number;
  /** 256 × RGB. */
  lut: Uint8Array;
  /** Colour at t ∈ [0, 1] (clamped). */
  at(t: number): Rgb;
  hex(t: number): string;
}

/** A ramp over [lo, hi] of the interpolator's range (hi < lo runs it backwards). */
export function makeRamp(name: RampName, lo = 0, hi = 1): Ramp {
  const f = INTERPOLATORS[name];
  const lut = new Uint8Array(256 * 3);
  for (let k = 0; k < 256; k++) {
    const c = parseColour(f(lo + (hi - lo) * (k / 255)));
    lut[3 * k] = c[0]; lut[3 * k + 1] = c[1]; lut[3 * k + 2] = c[2];
  }
  const at = (t: number): Rgb => {
    const k = Math.max(0, Math.min(255, Math.round((Number.isFinite(t) ? t : 0) * 255)));
    return [lut[3 * k], lut[3 * k + 1], lut[3 * k + 2]];
  };
  return { name, lo, hi, lut, at, hex: (t) => toHex(at(t)) };
}
