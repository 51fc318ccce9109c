/** Linear scales, "nice" tick steps (1, 2, 5 × 10^k) and contour levels. */

/** The step among 1, 2, 2.5, 5 × 10^k closest above span / target. */
export function niceStep(span: number, target: number): number {
  if (!(span > 0) || !Number.isFinite(span)) return 1;
  const raw = span / Math.max(1, target);
  const mag = 10 ** Math.floor(Math.log10(raw));
  for (const m of [1, 2, 2.5, 5, 10]) if (m * mag >= raw * (1 - 1e-9)) return m * mag;
  return 10 * mag;
}

/** Round off float noise of k·step so labels print as the multiples they are. */
function clean(x: number, step: number): number {
  const digits = Math.max(0, -Math.floor(Math.log10(step)) + 2);
  return Number(x.toFixed(Math.min(20, digits)));
}

/** Multiples of a nice step inside [lo, hi], about `target` of them. */
export function ticks(lo: number, hi: number, target = 6): number[] {
  if (!Number.isFinite(lo) || !Number.isFinite(hi)) return [];
  if (hi < lo) [lo, hi] = [hi, lo];
  if (hi === lo) return [lo];
  const step = niceStep(hi - lo, target);
  const out: number[] = [];
  for (let k = Math.ceil(lo / step - 1e-9); k * step <= hi + step * 1e-9; k++) out.push(clean(k * step, step));
  return out;
}

export interface ContourLevels {
  step: number;
  levels: number[];
  /** Every `indexEvery`-th multiple of step (a multiple of 5·step, or 4·step for a step of 2.5·10^k) is an index contour. */
  indexEvery: number;
}

/**
 * Contour levels strictly inside (min, max): multiples of a nice step giving about `target` levels
 * (never more than 2·target). Index contours are those at multiples of `indexEvery`·step.
 */
export function contourLevels(min: number, max: number, target = 12): ContourLevels {
  if (!(max > min) || !Number.isFinite(min) || !Number.isFinite(max)) return { step: 0, levels: [], indexEvery: 5 };
  let step = niceStep(max - min, target);
  while ((max - min) / step > 2 * target) step = niceStep(max - min, target / 2);
  const levels: number[] = [];
  for (let k = Math.floor(min / step) + 1; k * step < max; k++) {
    const v = clean(k * step, step);
    if (v > min && v < max) levels.push(v);
  }
  const mant = step / 10 ** Math.floor(Math.log10(step) + 1e-12);
  return { step, levels, indexEvery: Math.abs(mant - 2.5) < 1e-9 ? 4 : 5 };
}

export function isIndexLevel(level: number, c: ContourLevels): boolean {
  const k = Math.round(level / c.step);
  return k % c.indexEvery === 0;
}

/** An affine map [d0, d1] → [r0, r1]. */
export class Linear {
  constructor(readonly d0: number, readonly d1: number, readonly r0: number, readonly r1: number) {}
  map(v: number): number {
    return this.d1 === this.d0 ? (this.r0 + this.r1) / 2 : this.r0 + ((v - this.d0) / (this.d1 - this.d0)) * (this.r1 - this.r0);
  }
  invert(p: number): number {
    return this.r1 === this.r0 ? this.d0 : this.d0 + ((p - this.r0) / (this.r1 - this.r0)) * (this.d1 - this.d0);
  }
}

/** A data range padded by `frac` of its span (or ±1 for a single value). */
export function padded(lo: number, hi: number, frac = 0.05): [number, number] {
  if (!Number.isFinite(lo) || !Number.isFinite(hi)) return [0, 1];
  if (hi === lo) return [lo - (Math.abs(lo) * 0.05 || 1), hi + (Math.abs(hi) * 0.05 || 1)];
  const p = (hi - lo) * frac;
  return [lo - p, hi + p];
}

/** A short label for a number: up to `digits` significant digits, no float noise. */
export function fmtNum(x: number | null | undefined, digits = 5): string {
  if (x === null || x === undefined) return '—';
  if (x === Infinity) return '∞';
  if (x === -Infinity) return '−∞';
  if (!Number.isFinite(x)) return '—';
  if (x !== 0 && (Math.abs(x) >= 1e9 || Math.abs(x) < 1e-4)) return x.toExponential(digits - 1).replace('-', '−');
  if (Math.abs(x) >= 10 ** digits) return x.toFixed(0).replace('-', '−');
  return Number(x.toPrecision(digits)).toString().replace('-', '−');
}

/**
 * Indices of the k largest keys, largest first (ties: lower index first), NaN keys never picked.
 * One pass with a binary heap of the k best seen so far (its root the worst of them): O(n log k)
 * time and nothing of the keys' length allocated, so ranking millions of features for a page of a
 * few thousand neither sorts nor copies them (a copy of that size is garbage that forces a full
 * collection of a heap full of report objects).
 */
export function topIndices(keys: ArrayLike<number>, k: number): Uint32Array {
  const n = keys.length;
  const cap = Math.min(Math.max(0, Math.floor(k)), n);
  if (cap === 0) return new Uint32Array(0);
  const heap = new Uint32Array(cap);
  let size = 0;
  // a ranks below b: a smaller key, or the same key and a higher index
  const below = (a: number, b: number) => keys[a] < keys[b] || (keys[a] === keys[b] && a > b);
  for (let i = 0; i < n; i++) {
    const v = keys[i];
    if (v !== v) continue;
    if (size < cap) {
      // sift up
      let j = size++;
      while (j > 0) {
        const p = (j - 1) >> 1;
        if (!below(i, heap[p])) break;
        heap[j] = heap[p]; j = p;
      }
      heap[j] = i;
    } else if (below(heap[0], i)) {
      // replace the root and sift down
      let j = 0;
      for (;;) {
        const l = 2 * j + 1;
        if (l >= size) break;
        const c = l + 1 < size && below(heap[l + 1], heap[l]) ? l + 1 : l;
        if (!below(heap[c], i)) break;
        heap[j] = heap[c]; j = c;
      }
      heap[j] = i;
    }
  }
  return Uint32Array.from(Array.from(heap.subarray(0, size)).sort((a, b) => (below(a, b) ? 1 : below(b, a) ? -1 : 0)));
}
