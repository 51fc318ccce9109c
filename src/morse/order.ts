/**
 * Total order of the valid vertices by (value, index) — simulation of simplicity.
 * A stable LSD radix sort on the IEEE-754 bit pattern, O(n) for typed input.
 * NaN (nodata) vertices are left out of the order.
 *
 * Memory: each pass keeps only the key bits later passes still need (a full key, then the
 * top bits in 16-bit words), and the last pass writes into a buffer that is free by then,
 * so a float32 sort peaks at 14 bytes per vertex and a float64 sort at 18, output included.
 */

/** Map float32 bits to an unsigned key with the same order (negative floats reversed). */
function f32key(bits: number): number {
  return (bits & 0x80000000 ? ~bits : bits | 0x80000000) >>> 0;
}

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

/** The caller's output buffer, checked against the count of valid values, or a new one. */
function output(out: Uint32Array | undefined, m: number): Uint32Array {
  if (out === undefined) return new Uint32Array(m);
  if (out.length !== m) throw new RangeError(`sortOrder: the output buffer holds ${out.length} entries but there are ${m} valid values`);
  return out;
}

/** Three passes of 11, 11 and 10 bits. */
function sortF32(values: Float32Array, dest?: Uint32Array, work?: Uint32Array): Uint32Array {
  const n = values.length;
  const bits = new Uint32Array(values.buffer, values.byteOffset, n);
  const h0 = new Uint32Array(2048), h1 = new Uint32Array(2048), h2 = new Uint32Array(1024);
  let m = 0;
  for (let i = 0; i < n; i++) {
    const x = values[i];
    if (x !== x) continue;
    const key = f32key(bits[i]);
    h0[key & 2047]++; h1[(key >>> 11) & 2047]++; h2[key >>> 22]++;
    m++;
  }
  // pass 1: values → (index, full key), by bits 0–10
  const idxA = indexBuffer(work, 0, m);
  // the full keys, overwritten by the order in pass 3
  const keyA = output(dest, m);
  if (skipPass(h0, m)) {
    for (let i = 0, k = 0; i < n; i++) {
      const x = values[i];
      if (x !== x) continue;
      idxA[k] = i; keyA[k++] = f32key(bits[i]);
    }
  } else {
    prefix(h0);
    for (let i = 0; i < n; i++) {
      const x = values[i];
      if (x !== x) continue;
      const key = f32key(bits[i]);
      const pos = h0[key & 2047]++;
      idxA[pos] = i; keyA[pos] = key;
    }
  }
  // pass 2: → (index, top 10 bits), by bits 11–21
  const idxB = indexBuffer(work, 1, m);
  const topB = new Uint16Array(m);
  if (skipPass(h1, m)) {
    for (let k = 0; k < m; k++) { idxB[k] = idxA[k]; topB[k] = keyA[k] >>> 22; }
  } else {
    prefix(h1);
    for (let k = 0; k < m; k++) {
      const key = keyA[k];
      const pos = h1[(key >>> 11) & 2047]++;
      idxB[pos] = idxA[k]; topB[pos] = key >>> 22;
    }
  }
  // pass 3: → index, by bits 22–31, written over the full keys (no longer needed)
  if (skipPass(h2, m)) {
    if (dest === undefined && work === undefined) return idxB;
    keyA.set(idxB);
    return keyA;
  }
  prefix(h2);
  const out = keyA;
  for (let k = 0; k < m; k++) out[h2[topB[k]]++] = idxB[k];
  return out;
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
