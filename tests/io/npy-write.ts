/** Write 3-D (or any) .npy test arrays. */
import { writeFileSync } from 'node:fs';

/** A .npy file of a float64 array of the given shape; `at(idx)` gives the element at a C-order multi-index. */
export function writeNpy(path: string, shape: number[], fortran: boolean, at: (idx: number[]) => number): void {
  const n = shape.reduce((a, b) => a * b, 1);
  const data = new Float64Array(n);
  for (let lin = 0; lin < n; lin++) {
    // the multi-index of element lin in the file's order
    const idx = new Array(shape.length).fill(0);
    let r = lin;
    const axes = fortran ? shape.map((_, a) => a) : shape.map((_, a) => shape.length - 1 - a);
    for (const a of axes) { idx[a] = r % shape[a]; r = Math.floor(r / shape[a]); }
    data[lin] = at(idx);
  }
  const dict = `{'descr': '<f8', 'fortran_order': ${fortran ? 'True' : 'False'}, 'shape': (${shape.join(', ')}), }`;
  const total = Math.ceil((10 + dict.length + 1) / 64) * 64;
  const header = dict.padEnd(total - 11) + '\n';
  writeFileSync(path, Buffer.concat([Buffer.from([0x93]), Buffer.from('NUMPY'), Buffer.from([1, 0, header.length & 255, header.length >> 8]), Buffer.from(header), Buffer.from(data.buffer)]));
}

