#!/usr/bin/env node
/**
 * `ponds` tile by tile against the single grid, as whole processes on the same cells: the bench's
 * fractal terrain (bench/lib/terrain.mjs, seed 17) cut into T × T abutting tiles of raw float32
 * (bench/lib/raw-mosaic.mjs; the mosaic readers of GeoTIFF/VRT are another module), then
 *  - single  one process: the tiles assembled into one grid in memory, ponds() (Euler check,
 *            hierarchy, filled/depth/label rasters in memory);
 *  - tiled   one process: pondsTiled() with --workers W worker threads, labels waiting in files,
 *            each tile's rasters made and dropped (nothing written, as for single).
 * Each under /usr/bin/time (bench/lib/util.mjs timeProcess): wall, CPU, peak resident set of the
 * process and its worker threads. Both print a digest (depressions, Σ volume, filled cells, an
 * order-free hash of the filled and label rasters); the tiled run must match the single one.
 * Also: bytes of pass-1 summary per perimeter cell (all, and of the events alone).
 *
 *   npm run build && node bench/tiles.mjs [--size 4000] [--tiles 4] [--workers 2] [--repeat 1] [--only tiled]
 *
 * --only tiled skips the single grid (for sizes it cannot hold); nothing is compared then.
 *
 * A report, not a test: exits 0 unless the digests differ.
 */
import { parseArgs } from 'node:util';
import { mkdtempSync, rmSync, readFileSync } from 'node:fs';
import { tmpdir, loadavg } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { fractalTerrain } from './lib/terrain.mjs';
import { timeProcess, importDist, fmtNum, table } from './lib/util.mjs';
import { writeRawTiles, rawMosaic } from './lib/raw-mosaic.mjs';

const { values: opt } = parseArgs({
  options: {
    size: { type: 'string', default: '4000' },
    tiles: { type: 'string', default: '4' },
    workers: { type: 'string', default: '2' },
    repeat: { type: 'string', default: '1' },
    only: { type: 'string' },
    child: { type: 'string' },
    dir: { type: 'string' },
  },
});

/** XOR of a mix of (cell, bits) over the cells: independent of the order the cells come in. */
function hashInto(h, gi, filled, labels) {
  const f = new Uint32Array(filled.buffer, filled.byteOffset, filled.length);
  for (let i = 0; i < f.length; i++) {
    const x = Math.imul(gi(i) + 1, 0x9e3779b1) ^ Math.imul(f[i] ^ 0x85ebca6b, 0xc2b2ae35) ^ Math.imul(labels[i] + 7, 0x27d4eb2f);
    h[0] ^= x; h[1] = (h[1] + (x >>> 16)) >>> 0;
  }
}

async function child(mode, dir) {
  const mosaic = rawMosaic(dir);
  const h = new Uint32Array(2);
  let digest;
  if (mode === 'single') {
    const { Grid } = await importDist('surface/grid.js');
    const { ponds } = await importDist('hydro/ponds.js');
    const values = await mosaic.readWindow({ col0: 0, row0: 0, width: mosaic.width, height: mosaic.height });
    const r = ponds(new Grid({ width: mosaic.width, height: mosaic.height, values }), { euler: true });
    hashInto(h, (i) => i, r.rasters.filled, r.rasters.labels);
    let vol = 0;
    for (let d = 1; d <= r.hierarchy.count; d++) vol += r.hierarchy.volume[d];
    digest = { depressions: r.hierarchy.count, volume: vol, filledCells: r.rasters.filledCells, hash: [...h], euler: r.euler.holds };
  } else {
    const { pondsTiled, folderLabelStore } = await importDist('tiles/ponds.js');
    const lab = mkdtempSync(join(tmpdir(), 'sill-bench-labels-'));
    try {
      const W = mosaic.width;
      const r = await pondsTiled(mosaic, {
        workers: Number(opt.workers), labels: folderLabelStore(lab),
        onRasters: (_t, own, rs) => hashInto(h, (i) => (own.row0 + Math.floor(i / own.width)) * W + own.col0 + (i % own.width), rs.filled, rs.labels),
      });
      let vol = 0;
      for (let d = 1; d <= r.hierarchy.count; d++) vol += r.hierarchy.volume[d];
      digest = { depressions: r.hierarchy.count, volume: vol, filledCells: r.filledCells, hash: [...h], euler: r.euler.holds, seams: r.seams, nodes: r.tree.count - 1 };
    } finally { rmSync(lab, { recursive: true, force: true }); }
  }
  process.stdout.write(JSON.stringify(digest));
}

if (opt.child) {
  await child(opt.child, opt.dir);
} else {
  const size = Number(opt.size), T = Number(opt.tiles), repeat = Math.max(1, Number(opt.repeat));
  const dir = mkdtempSync(join(tmpdir(), 'sill-bench-tiles-'));
  try {
    writeRawTiles(dir, fractalTerrain(size), size, T);
    const self = fileURLToPath(import.meta.url);
    const runs = { single: [], tiled: [] };
    const digests = {};
    for (let k = 0; k < repeat; k++) {
      for (const mode of opt.only ? [opt.only] : ['single', 'tiled']) {
        const out = join(dir, `${mode}.json`);
        const t = timeProcess(process.execPath, ['--max-old-space-size=16000', self, '--child', mode, '--dir', dir, '--workers', opt.workers], { stdout: out });
        if (t.status !== 0) throw new Error(`${mode} failed: ${t.stderr}`);
        runs[mode].push(t);
        digests[mode] = JSON.parse(readFileSync(out, 'utf8'));
      }
    }
    const best = (m) => runs[m].reduce((a, b) => (b.ms < a.ms ? b : a));
    const cells = size * size;
    const rows = [['run', 'wall s', 'CPU s', 'peak RSS MiB', 'B/cell', 'Mcells/s']];
    for (const m of ['single', 'tiled']) {
      if (runs[m].length === 0) continue;
      const b = best(m);
      rows.push([m === 'tiled' ? `tiled (${T}×${T} tiles, ${opt.workers} workers)` : 'single grid', fmtNum(b.ms / 1000), fmtNum(b.cpuMs / 1000), fmtNum(b.maxRss / 2 ** 20, 0), fmtNum(b.maxRss / cells, 1), fmtNum(cells / b.ms / 1000)]);
    }
    console.log(`ponds on ${size}×${size} fractal terrain (${cells / 1e6} M cells), load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}`);
    console.log(table(rows));
    const s = digests.tiled.seams;
    if (digests.single) console.log(`ratio tiled/single: wall ${fmtNum(best('tiled').ms / best('single').ms)}, peak RSS ${fmtNum(best('tiled').maxRss / best('single').maxRss)}`);
    console.log(`seams: ${s.perimeterCells} perimeter cells, ${s.events} events, ${digests.tiled.nodes} nodes; summary ${fmtNum(s.summaryBytes / s.perimeterCells, 0)} B per perimeter cell (events alone ${fmtNum(s.eventBytes / s.perimeterCells, 0)} B; the rest is ${fmtNum((s.summaryBytes - s.eventBytes) / digests.tiled.nodes, 0)} B per node)`);
    const a = digests.single, b = digests.tiled;
    if (!a) { console.log(`tiled only: ${b.depressions} depressions, Euler check ${b.euler ? 'holds' : 'FAILS'}`); process.exit(b.euler ? 0 : 1); }
    const same = a.depressions === b.depressions && a.filledCells === b.filledCells && a.hash[0] === b.hash[0] && a.hash[1] === b.hash[1] && Math.abs(a.volume - b.volume) <= 1e-12 * Math.abs(a.volume) && a.euler && b.euler;
    console.log(`result equal to the single grid: ${same ? 'yes' : 'NO'} (depressions ${a.depressions}/${b.depressions}, Σ volume rel. diff ${(Math.abs(a.volume - b.volume) / Math.abs(a.volume)).toExponential(1)})`);
    if (!same) process.exitCode = 1;
  } finally { rmSync(dir, { recursive: true, force: true }); }
}
