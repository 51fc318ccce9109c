/**
 * Total order of the valid vertices by (value, index) — simulation of simplicity.
 * A stable LSD radix sort on the IEEE-754 bit pattern, O(n) for typed input.
 * NaN (nodata) vertices are left out of the order.
 */

/** Map float32 bits to an unsigned key with the same order (negative floats reversed). */
function f32key(bits: number): number {
  return (bits & 0x80000000 ? ~bits : bits | 0x80000000) >>> 0;
}

/** Ascending order of the non-NaN entries of `values`, ties broken by index. */
export function sortOrder(values: Float32Array | Float64Array): Uint32Array {
  return values instanceof Float32Array ? sortF32(values) : sortF64(values);
}

function sortF32(values: Float32Array): Uint32Array {
  const n = values.length;
  const bits = new Uint32Array(values.buffer, values.byteOffset, n);
  let m = 0;
  for (let i = 0; i < n; i++) if (values[i] === values[i]) m++;
  let idx = new Uint32Array(m);
  let keys = new Uint32Array(m);
  const h0 = new Uint32Array(2048), h1 = new Uint32Array(2048), h2 = new Uint32Array(1024);
  for (let i = 0, k = 0; i < n; i++) {
    if (values[i] !== values[i]) continue;
    const key = f32key(bits[i]);
    idx[k] = i; keys[k++] = key;
    h0[key & 2047]++; h1[(key >>> 11) & 2047]++; h2[key >>> 22]++;
  }
  let idx2 = new Uint32Array(m);
  let keys2 = new Uint32Array(m);
  const passes: [Uint32Array, number, number][] = [[h0, 0, 2047], [h1, 11, 2047], [h2, 22, 1023]];
  for (const [h, shift, mask] of passes) {
    if (skipPass(h, m)) continue;
    prefix(h);
    for (let k = 0; k < m; k++) {
      const key = keys[k];
      const pos = h[(key >>> shift) & mask]++;
      idx2[pos] = idx[k]; keys2[pos] = key;
    }
    [idx, idx2] = [idx2, idx];
    [keys, keys2] = [keys2, keys];
  }
  return idx;
}

function sortF64(values: Float64Array): Uint32Array {
  const n = values.length;
  const words = new Uint32Array(values.buffer, values.byteOffset, 2 * n);
  let m = 0;
  for (let i = 0; i < n; i++) if (values[i] === values[i]) m++;
  let idx = new Uint32Array(m);
  let hi = new Uint32Array(m), lo = new Uint32Array(m);
  const hs = [new Uint32Array(65536), new Uint32Array(65536), new Uint32Array(65536), new Uint32Array(65536)];
  for (let i = 0, k = 0; i < n; i++) {
    if (values[i] !== values[i]) continue;
    // little-endian: words[2i] is the low word, words[2i+1] the high word with the sign bit
    let h = words[2 * i + 1], l = words[2 * i];
    if (h & 0x80000000) { h = ~h >>> 0; l = ~l >>> 0; } else { h = (h | 0x80000000) >>> 0; }
    idx[k] = i; hi[k] = h; lo[k++] = l;
    hs[0][l & 0xffff]++; hs[1][l >>> 16]++; hs[2][h & 0xffff]++; hs[3][h >>> 16]++;
  }
  let idx2 = new Uint32Array(m), hi2 = new Uint32Array(m), lo2 = new Uint32Array(m);
  for (let p = 0; p < 4; p++) {
    const h = hs[p];
    if (skipPass(h, m)) continue;
    prefix(h);
    const src = p < 2 ? lo : hi;
    const shift = p % 2 === 0 ? 0 : 16;
    for (let k = 0; k < m; k++) {
      const pos = h[(src[k] >>> shift) & 0xffff]++;
      idx2[pos] = idx[k]; hi2[pos] = hi[k]; lo2[pos] = lo[k];
    }
    [idx, idx2] = [idx2, idx];
    [hi, hi2] = [hi2, hi];
    [lo, lo2] = [lo2, lo];
  }
  return idx;
}

function skipPass(h: Uint32Array, m: number): boolean {
  for (let i = 0; i < h.length; i++) if (h[i] !== 0) return h[i] === m;
  return true;
}

function prefix(h: Uint32Array): void {
  let s = 0;
  for (let i = 0; i < h.length; i++) { const c = h[i]; h[i] = s; s += c; }
}

/** True when vertex a comes before vertex b in the (value, index) order. */
export function before(values: ArrayLike<number>, a: number, b: number): boolean {
  const va = values[a], vb = values[b];
  return va < vb || (va === vb && a < b);
}
