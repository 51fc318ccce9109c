/**
 * A mosaic of raw float32 tiles on disk for the tile benchmark (bench/tiles.mjs): one file per
 * tile, row-major, and a manifest.json with the mosaic size and the tiles' windows. readWindow
 * reads only the rows of the tiles a window overlaps (memory is the window's).
 */
import { openSync, readSync, closeSync, readFileSync, writeFileSync, mkdirSync } from 'node:fs';
import { join } from 'node:path';

/** Cut row-major float32 `values` (size × size) into T × T abutting tiles written under `dir`. */
export function writeRawTiles(dir, values, size, T) {
  mkdirSync(dir, { recursive: true });
  const step = Math.ceil(size / T);
  const tiles = [];
  for (let r = 0; r < T; r++) for (let c = 0; c < T; c++) {
    const col0 = c * step, row0 = r * step;
    const width = Math.min(step, size - col0), height = Math.min(step, size - row0);
    const name = `r${r}c${c}`;
    const buf = new Float32Array(width * height);
    for (let y = 0; y < height; y++) buf.set(values.subarray((row0 + y) * size + col0, (row0 + y) * size + col0 + width), y * width);
    writeFileSync(join(dir, `${name}.f32`), new Uint8Array(buf.buffer));
    tiles.push({ name, col0, row0, width, height });
  }
  writeFileSync(join(dir, 'manifest.json'), JSON.stringify({ width: size, height: size, tiles }));
}

/** The Mosaic (src/tiles/mosaic.ts) of the tiles under `dir`. */
export function rawMosaic(dir) {
  const m = JSON.parse(readFileSync(join(dir, 'manifest.json'), 'utf8'));
  const tiles = m.tiles.map((t) => ({ ...t, path: join(dir, `${t.name}.f32`), own: { col0: t.col0, row0: t.row0, width: t.width, height: t.height } }));
  return {
    source: dir, width: m.width, height: m.height, transform: [0, 1, 0, 0, 0, -1], crs: null, nodata: null, float64: false, tiles,
    async readWindow(w) {
      const out = new Float32Array(w.width * w.height).fill(NaN);
      for (const t of tiles) {
        const c0 = Math.max(w.col0, t.col0), c1 = Math.min(w.col0 + w.width, t.col0 + t.width);
        const r0 = Math.max(w.row0, t.row0), r1 = Math.min(w.row0 + w.height, t.row0 + t.height);
        if (c0 >= c1 || r0 >= r1) continue;
        const fd = openSync(t.path, 'r');
        try {
          const row = new Float32Array(c1 - c0);
          for (let r = r0; r < r1; r++) {
            readSync(fd, new Uint8Array(row.buffer), 0, row.byteLength, 4 * ((r - t.row0) * t.width + (c0 - t.col0)));
            out.set(row, (r - w.row0) * w.width + (c0 - w.col0));
          }
        } finally { closeSync(fd); }
      }
      return out;
    },
  };
}
