/** Display raster layers as RGBA pixels: a colour ramp, optional hillshade, translucent overlays. */
import type { Ramp } from './colour.js';
import { parseColour } from './colour.js';
import { THEME } from './theme.js';

export interface ColouriseOptions {
  /** Hillshade in [0, 1] per pixel (same size); flat ground shades to `flatShade`. */
  shade?: Float32Array | null;
  flatShade?: number;
  /** Strength of the shading, 0 (none) to 1. */
  shadeStrength?: number;
  /** Colour of nodata pixels (default THEME.nodata); null = transparent. */
  nodata?: string | null;
}

/** Ramp position of v in [lo, hi], clamped to [0, 1]. */
export function rampT(v: number, lo: number, hi: number): number {
  if (!(hi > lo)) return 0.5;
  const t = (v - lo) / (hi - lo);
  return t < 0 ? 0 : t > 1 ? 1 : t;
}

/**
 * RGBA pixels for `values` through `ramp` over [lo, hi]. With a shade, each colour is darkened on
 * slopes turned from the sun and lightened on slopes facing it, by (shade − flatShade)·strength.
 */
export function colourise(values: Float32Array, ramp: Ramp, lo: number, hi: number, opts: ColouriseOptions = {}): Uint8Array {
  const n = values.length, out = new Uint8Array(n * 4);
  const nd = opts.nodata === null ? null : parseColour(opts.nodata ?? THEME.nodata);
  const shade = opts.shade ?? null, flat = opts.flatShade ?? Math.SQRT1_2, k = opts.shadeStrength ?? 0.9;
  const span = hi - lo, lut = ramp.lut;
  for (let i = 0; i < n; i++) {
    const v = values[i], o = 4 * i;
    if (v !== v) {
      if (nd) { out[o] = nd[0]; out[o + 1] = nd[1]; out[o + 2] = nd[2]; out[o + 3] = 255; }
      continue;
    }
    let t = span > 0 ? (v - lo) / span : 0.5;
    t = t < 0 ? 0 : t > 1 ? 1 : t;
    const q = 3 * Math.round(t * 255);
    let r = lut[q], g = lut[q + 1], b = lut[q + 2];
    if (shade) {
      const s = shade[i];
      if (s === s) {
        const f = 1 + k * (s - flat);
        if (f < 1) { const m = Math.max(0.3, f); r *= m; g *= m; b *= m; } else { const m = Math.min(0.5, f - 1); r += (255 - r) * m; g += (255 - g) * m; b += (255 - b) * m; }
      }
    }
    out[o] = r; out[o + 1] = g; out[o + 2] = b; out[o + 3] = 255;
  }
  return out;
}

/** A translucent overlay: pixels with a value > 0 get the ramp colour at opacity `alpha`; others stay transparent. */
export function overlay(values: Float32Array, ramp: Ramp, lo: number, hi: number, alpha = 0.85): Uint8Array {
  const n = values.length, out = new Uint8Array(n * 4);
  const a = Math.round(alpha * 255), lut = ramp.lut;
  for (let i = 0; i < n; i++) {
    const v = values[i];
    if (!(v > 0)) continue;
    const q = 3 * Math.round(rampT(v, lo, hi) * 255), o = 4 * i;
    out[o] = lut[q]; out[o + 1] = lut[q + 1]; out[o + 2] = lut[q + 2]; out[o + 3] = a;
  }
  return out;
}
