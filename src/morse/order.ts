/**
 * Total order of the valid vertices by (value, index) — simulation of simplicity.
 * A stable radix sort on the IEEE-754 bit pattern, O(n) for typed input.
 * NaN (nodata) vertices are left out of the order.
 *
 * float32: one most-significant-digit pass on the top 12 key bits scatters (key, index) pairs
 * into buckets; each bucket is then finished on its own by two least-significant-digit passes
 * of 10 bits (bits 0–9, then 10–19), or by insertion sort when it holds a few keys. Real
 * surfaces fill only a few hundred of the 4096 top buckets, so the scattering pass writes to
 * few places at once, and a bucket's passes work on a stretch of memory much smaller than the
 * grid (a plain three-pass LSD sort scatters 2048 ways over the whole grid in two of its passes).
 * Every step is stable, so equal values keep ascending
 * indices. (Splitting large buckets once more on bits 10–19 was tried and was slower.)
 * Memory: the pairs (8 bytes per vertex), the output (4) and 16-bit scratch for the largest
 * bucket (at most 2), so a float32 sort peaks at 14 bytes per vertex, output included, and at
 * about 12.3 on real surfaces (the largest bucket of the benchmark terrain holds 12 % of it).
 * float64: four LSD passes of 16 bits; each pass keeps only the key bits later passes still need
 * (a full key, then the top bits in 16-bit words), and the last pass writes into a buffer that is
 * free by then, so a float64 sort peaks at 18 bytes per vertex, output included.
 */

/**
 * Ascending order of the non-NaN entries of `values`, ties broken by index.
 * @param out where to write the order (e.g. on shared memory for a worker thread): exactly as
 *   many entries as `values` has non-NaN ones; it takes the place of a buffer the sort would
 *   allocate, so it costs no memory. Returned.
 * @param work room for the sort's index buffers, at least twice as many entries as `out`: the
 *   caller can use it for something else afterwards (survey's union-find forests) instead of
 *   the sort's garbage and a new allocation.
 */
export function sortOrder(values: Float32Array | Float64Array, out?: Uint32Array, work?: Uint32Array): Uint32Array {
  return values instanceof Float32Array ? sortF32(values, out, work) : sortF64(values, out, work);
}

/** Index buffer k (0 or 1) of m entries: in the caller's work buffer, or new. */
function indexBuffer(work: Uint32Array | undefined, k: number, m: number): Uint32Array {
  if (work === undefined) return new Uint32Array(m);
  if (work.length < 2 * m) throw new RangeError(`sortOrder: the work buffer holds ${work.length} entries but the sort needs ${2 * m}`);
  return work.subarray(k * m, (k + 1) * m);
}

/** The (key, index) pairs of the float32 sort in the caller's work buffer (2m entries). */
function pairBuffer(work: Uint32Array, m: number): Uint32Array {
  if (work.length < 2 * m) throw new RangeError(`sortOrder: the work buffer holds ${work.length} entries but the sort needs ${2 * m}`);
  return work.subarray(0, 2 * m);
}

/** The caller's output buffer, checked against the count of valid values, or a new one. */
function output(out: Uint32Array | undefined, m: number): Uint32Array {
  if (out === undefined) return new Uint32Array(m);
  if (out.length !== m) throw new RangeError(`sortOrder: the output buffer holds ${out.length} entries but there are ${m} valid values`);
  return out;
}

/** Buckets up to this many keys are finished by insertion sort. */
const TINY_BUCKET = 24;

/**
 * float32: the key of bit pattern b is b ^ (sign ? 0xffffffff : 0x80000000) — an unsigned
 * number with the order of the floats (negative floats reversed); NaN patterns are skipped.
 */
function sortF32(values: Float32Array, dest?: Uint32Array, work?: Uint32Array): Uint32Array {
  const n = values.length;
  const bits = new Uint32Array(values.buffer, values.byteOffset, n);
  // one small function per pass: each is optimised on its own while it runs, and leaving one
  // loop never sends the others back to the interpreter (the first and only call is the hot one)
  const start = new Uint32Array(4097);
  const m = countTopDigits(bits, start);
  const big = bucketStarts(start, m);
  // the pairs take the caller's work buffer (2m entries) when there is one
  const pairs = work === undefined ? new Uint32Array(2 * m) : pairBuffer(work, m);
  scatterPairs(bits, start.slice(0, 4096), pairs);
  const out = output(dest, m);
  const mid = new Uint16Array(big > TINY_BUCKET ? big : 0);
  const h0 = new Uint32Array(1024), h1 = new Uint32Array(1024);
  for (let d = 0; d < 4096; d++) {
    const lo = start[d], hi = start[d + 1], len = hi - lo;
    if (len === 0) continue;
    if (len <= TINY_BUCKET) tinyBucket(pairs, out, lo, hi);
    else bucketPasses(pairs, out, mid, h0, h1, lo, hi);
  }
  return out;
}

/** Count the non-NaN keys by their top 12 bits into `count`; the number of non-NaN keys. */
function countTopDigits(bits: Uint32Array, count: Uint32Array): number {
  let m = 0;
  for (let i = 0; i < bits.length; i++) {
    const b = bits[i];
    if ((b & 0x7fffffff) > 0x7f800000) continue; // NaN
    count[(b ^ ((b >> 31) | 0x80000000)) >>> 20]++;
    m++;
  }
  return m;
}

/** Turn the counts into bucket starts (start[4096] = m); the size of the largest bucket. */
function bucketStarts(start: Uint32Array, m: number): number {
  let big = 0;
  for (let d = 0, s = 0; d < 4096; d++) {
    const c = start[d];
    start[d] = s;
    s += c;
    if (c > big) big = c;
  }
  start[4096] = m;
  return big;
}

/** Scatter (key, index) pairs into their top buckets, in index order (stable). */
function scatterPairs(bits: Uint32Array, next: Uint32Array, pairs: Uint32Array): void {
  for (let i = 0; i < bits.length; i++) {
    const b = bits[i];
    if ((b & 0x7fffffff) > 0x7f800000) continue;
    const key = b ^ ((b >> 31) | 0x80000000);
    const pos = next[key >>> 20]++ << 1;
    pairs[pos] = key;
    pairs[pos + 1] = i;
  }
}

/** A few pairs: stable insertion sort by key in place, then the indices into `out`. */
function tinyBucket(pairs: Uint32Array, out: Uint32Array, lo: number, hi: number): void {
  for (let k = lo + 1; k < hi; k++) {
    const key = pairs[2 * k], idx = pairs[2 * k + 1];
    let j = k - 1;
    while (j >= lo && pairs[2 * j] > key) {
      pairs[2 * j + 2] = pairs[2 * j];
      pairs[2 * j + 3] = pairs[2 * j + 1];
      j--;
    }
    pairs[2 * j + 2] = key;
    pairs[2 * j + 3] = idx;
  }
  for (let k = lo; k < hi; k++) out[k] = pairs[2 * k + 1];
}

/**
 * A bucket's two LSD passes: by bits 0–9 (indices into out, bits 10–19 into `mid`), then by
 * bits 10–19 into the bucket's own pair slots (free by then), copied back to out.
 */
function bucketPasses(pairs: Uint32Array, out: Uint32Array, mid: Uint16Array, h0: Uint32Array, h1: Uint32Array, lo: number, hi: number): void {
  h0.fill(0);
  h1.fill(0);
  for (let k = 2 * lo; k < 2 * hi; k += 2) {
    const key = pairs[k];
    h0[key & 1023]++;
    h1[(key >>> 10) & 1023]++;
  }
  prefix(h0);
  prefix(h1);
  for (let k = 2 * lo; k < 2 * hi; k += 2) {
    const key = pairs[k];
    const p = h0[key & 1023]++;
    out[lo + p] = pairs[k + 1];
    mid[p] = (key >>> 10) & 1023;
  }
  const len = hi - lo, base = 2 * lo;
  for (let k = 0; k < len; k++) pairs[base + h1[mid[k]]++] = out[lo + k];
  for (let k = 0; k < len; k++) out[lo + k] = pairs[base + k];
}

/** Four passes of 16 bits. */
function sortF64(values: Float64Array, dest?: Uint32Array, work?: Uint32Array): Uint32Array {
  const n = values.length;
  const words = new Uint32Array(values.buffer, values.byteOffset, 2 * n);
  const h0 = new Uint32Array(65536), h1 = new Uint32Array(65536), h2 = new Uint32Array(65536), h3 = new Uint32Array(65536);
  let m = 0;
  for (let i = 0; i < n; i++) {
    const x = values[i];
    if (x !== x) continue;
    // little-endian: words[2i] is the low word, words[2i+1] the high word with the sign bit
    let h = words[2 * i + 1], l = words[2 * i];
    if (h & 0x80000000) { h = ~h >>> 0; l = ~l >>> 0; } else { h = (h | 0x80000000) >>> 0; }
    h0[l & 0xffff]++; h1[l >>> 16]++; h2[h & 0xffff]++; h3[h >>> 16]++;
    m++;
  }
  // pass 1: values → (index, high word, bits 16–31 of the low word), by bits 0–15
  const idxA = indexBuffer(work, 0, m);
  // the high words, overwritten by the order in pass 4
  const hiA = output(dest, m);
  const midA = new Uint16Array(m);
  const skip0 = skipPass(h0, m);
  if (!skip0) prefix(h0);
  for (let i = 0, k = 0; i < n; i++) {
    const x = values[i];
    if (x !== x) continue;
    let h = words[2 * i + 1], l = words[2 * i];
    if (h & 0x80000000) { h = ~h >>> 0; l = ~l >>> 0; } else { h = (h | 0x80000000) >>> 0; }
    const pos = skip0 ? k++ : h0[l & 0xffff]++;
    idxA[pos] = i; hiA[pos] = h; midA[pos] = l >>> 16;
  }
  // pass 2: → (index, high word), by bits 16–31
  const idxB = indexBuffer(work, 1, m);
  const hiB = new Uint32Array(m);
  if (skipPass(h1, m)) {
    idxB.set(idxA); hiB.set(hiA);
  } else {
    prefix(h1);
    for (let k = 0; k < m; k++) {
      const pos = h1[midA[k]]++;
      idxB[pos] = idxA[k]; hiB[pos] = hiA[k];
    }
  }
  // pass 3: → (index, top 16 bits), by bits 32–47, reusing the pass-1 buffers
  const idxC = idxA;
  const topC = midA;
  if (skipPass(h2, m)) {
    for (let k = 0; k < m; k++) { idxC[k] = idxB[k]; topC[k] = hiB[k] >>> 16; }
  } else {
    prefix(h2);
    for (let k = 0; k < m; k++) {
      const h = hiB[k];
      const pos = h2[h & 0xffff]++;
      idxC[pos] = idxB[k]; topC[pos] = h >>> 16;
    }
  }
  // pass 4: → index, by bits 48–63, written over the pass-1 high words
  if (skipPass(h3, m)) {
    if (dest === undefined && work === undefined) return idxC;
    hiA.set(idxC);
    return hiA;
  }
  prefix(h3);
  const out = hiA;
  for (let k = 0; k < m; k++) out[h3[topC[k]]++] = idxC[k];
  return out;
}

/** True when every key falls in one bucket, so the pass would not move anything. */
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
