/**
 * The floor under every command: reading the GeoTIFF plus one radix sort of its values, each run
 * a whole process of its own started on the file on disk (node's start-up, module loading,
 * reading, decoding, sorting). Beside it, in the same run: the reference — a process that reads
 * the same values as raw float32 and sorts them with Float32Array.prototype.sort() — and, with
 * --before DIR, the same floor with an older build (DIR is its dist/ folder).
 *
 * Layouts: the terrain written uncompressed in strips by writeGeoTiff, and — when GDAL's
 * gdal_translate is installed — DEFLATE tiles with predictor 3 and LZW strips, as GDAL writes them.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { BENCH_DIR, DIST_DIR, importDist, median } from '../lib/util.mjs';

const CHILD = join(BENCH_DIR, 'lib', 'floor-child.mjs');
const GDAL_TRANSLATE = '/usr/bin/gdal_translate';

/** Run one child to completion; its JSON report plus the wall time seen from here. */
function child(args) {
  const t0 = performance.now();
  const r = spawnSync(process.execPath, [CHILD, ...args], { encoding: 'utf8' });
  const wall = performance.now() - t0;
  if (r.status !== 0) throw new Error(`floor child ${args.join(' ')} failed: ${r.stderr}`);
  return { ...JSON.parse(r.stdout.trim().split('\n').pop()), wall };
}

export const floorCase = {
  name: 'floor',
  about: 'readGeoTiff + one sortOrder as a whole process from the file on disk (threads: default and 1), beside a raw read + Float32Array sort process',
  skip(ctx) {
    if (ctx.float64) return 'the floor is measured on float32 GeoTIFFs';
    if (!existsSync(join(DIST_DIR, 'io', 'tiff-worker.js'))) return 'dist/io/tiff-worker.js not built: run npm run build';
    return null;
  },
  async run(ctx) {
    const { writeGeoTiff } = await importDist('io/geotiff-write.js');
    const dir = mkdtempSync(join(tmpdir(), 'sill-floor-'));
    try {
      const values = ctx.terrain();
      const base = join(dir, 'none.tif');
      await writeGeoTiff(base, {
        width: ctx.size, height: ctx.size, values, transform: [500000, 10, 0, 6000000, 0, -10], crs: { epsg: 32633 }, nodata: null,
      });
      const raw = join(dir, 'values.f32');
      writeFileSync(raw, new Uint8Array(values.buffer, values.byteOffset, values.byteLength));
      const layouts = [['uncompressed strips', base]];
      if (existsSync(GDAL_TRANSLATE)) {
        for (const [label, name, co] of [
          ['DEFLATE tiles, predictor 3', 'deflate.tif', ['TILED=YES', 'COMPRESS=DEFLATE', 'PREDICTOR=3']],
          ['LZW strips', 'lzw.tif', ['COMPRESS=LZW']],
        ]) {
          const p = join(dir, name);
          const r = spawnSync(GDAL_TRANSLATE, ['-q', ...co.flatMap((c) => ['-co', c]), base, p]);
          if (r.status === 0) layouts.push([label, p]);
          else ctx.warn(`gdal_translate ${co.join(' ')} failed; layout skipped`);
        }
      } else {
        ctx.note('floor.layouts', 'gdal_translate not installed: uncompressed strips only');
      }
      const builds = [['now', DIST_DIR]];
      if (ctx.before) builds.push(['before', ctx.before]);
      // every configuration once per round, rounds repeated, so all see the same load from other work
      const runs = new Map();
      const add = (key, r) => { if (!runs.has(key)) runs.set(key, []); runs.get(key).push(r); };
      for (let k = 0; k < ctx.repeat; k++) {
        add('reference', child(['--reference', raw]));
        for (const [li, [, file]] of layouts.entries()) {
          for (const [build, dist] of builds) {
            for (const threads of build === 'now' ? ['default', '1'] : ['default']) {
              add(`${build}.${li}.${threads}`, child([dist, file, threads]));
            }
          }
        }
      }
      const rec = (key, label, rs) => {
        const pick = (f) => rs.map(f);
        const wall = pick((r) => r.wall);
        ctx.record(`floor.${key}.ms`, median(wall), { label, unit: 'ms', samples: wall, cpu: pick((r) => r.cpu) });
        ctx.record(`floor.${key}.read.ms`, median(pick((r) => r.read)), { label: '    of which reading', unit: 'ms', samples: pick((r) => r.read), cpu: pick((r) => r.readCpu) });
        ctx.record(`floor.${key}.sort.ms`, median(pick((r) => r.sort)), { label: '    of which sorting', unit: 'ms', samples: pick((r) => r.sort), cpu: pick((r) => r.sortCpu) });
      };
      rec('reference', 'reference process: raw float32 read + Float32Array sort', runs.get('reference'));
      for (const [li, [label]] of layouts.entries()) {
        for (const [build] of builds) {
          for (const threads of build === 'now' ? ['default', '1'] : ['default']) {
            const rs = runs.get(`${build}.${li}.${threads}`);
            rec(`${build}.${li}.${threads}`, `floor process, ${label}${build === 'before' ? ', build before' : ''}${threads === '1' ? ', --threads 1' : ''}`, rs);
          }
        }
      }
      ctx.note('floor.layoutLabels', layouts.map(([l]) => l));
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  },
  targets: [
    { key: 'floor.now.0.default.ms / floor.reference.ms', label: 'floor (uncompressed) / reference process', limit: null, compute: (r) => r['floor.now.0.default.ms'] / r['floor.reference.ms'] },
    { key: 'floor.now.1.default.ms / floor.reference.ms', label: 'floor (DEFLATE tiles) / reference process', limit: null, compute: (r) => r['floor.now.1.default.ms'] / r['floor.reference.ms'] },
    { key: 'floor.now.2.default.ms / floor.reference.ms', label: 'floor (LZW strips) / reference process', limit: null, compute: (r) => r['floor.now.2.default.ms'] / r['floor.reference.ms'] },
    { key: 'floor.before.0.default.ms / floor.now.0.default.ms', label: 'floor before / now (uncompressed)', limit: null, compute: (r) => r['floor.before.0.default.ms'] / r['floor.now.0.default.ms'] },
    { key: 'floor.before.1.default.ms / floor.now.1.default.ms', label: 'floor before / now (DEFLATE tiles)', limit: null, compute: (r) => r['floor.before.1.default.ms'] / r['floor.now.1.default.ms'] },
    { key: 'floor.before.2.default.ms / floor.now.2.default.ms', label: 'floor before / now (LZW strips)', limit: null, compute: (r) => r['floor.before.2.default.ms'] / r['floor.now.2.default.ms'] },
  ],
};
