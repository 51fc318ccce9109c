#!/usr/bin/env node
/**
 * Byte-for-byte snapshot of what `sill survey` and `sill barriers` write, for comparing two builds
 * (before and after a change that must not alter outputs).
 *
 *   node bench/survey-outputs.mjs inputs DIR            write the inputs (fixtures are used in place)
 *   node bench/survey-outputs.mjs save DIR INPUTS [--sill dist/cli/main.js] [--big]
 *                                                       run every case, keep stdout, stderr, exit code and files
 *   node bench/survey-outputs.mjs compare A B           list every file that differs (exit 1 if any)
 *
 * The cases: every GeoTIFF and .npy fixture (survey --json and -o), boundary, connectivity and
 * persistence variants on a small fractal terrain with ties, a scattered-sample mesh, the
 * Müller–Brown grid and the demo scan for barriers, and (--big) the bench's 1000² rough terrain.
 * report.html is left out (it carries the time it was made), and so are the output folder's own
 * bookkeeping files (.sill-*).
 */
import { spawnSync } from 'node:child_process';
import { mkdirSync, readdirSync, readFileSync, writeFileSync, statSync, existsSync, rmSync } from 'node:fs';
import { join, resolve, relative, dirname } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { fractalTerrain, makeRandom } from './lib/terrain.mjs';

const ROOT = dirname(dirname(fileURLToPath(import.meta.url)));
const [mode, ...rest] = process.argv.slice(2);

function muellerBrown(x, y) {
  // Müller & Brown, Theor. Chim. Acta 53, 75 (1979): the published parameters
  const A = [-200, -100, -170, 15], a = [-1, -1, -6.5, 0.7], b = [0, 0, 11, 0.6], c = [-10, -10, -6.5, 0.7];
  const x0 = [1, 0, -0.5, -1], y0 = [0, 0.5, 1.5, 1];
  let e = 0;
  for (let k = 0; k < 4; k++) { const dx = x - x0[k], dy = y - y0[k]; e += A[k] * Math.exp(a[k] * dx * dx + b[k] * dx * dy + c[k] * dy * dy); }
  return e;
}

async function writeInputs(dir) {
  mkdirSync(dir, { recursive: true });
  const { writeGeoTiff } = await import(pathToFileURL(join(ROOT, 'dist/io/geotiff-write.js')).href);
  const tif = (name, size, opts) => writeGeoTiff(join(dir, name), {
    width: size, height: size, values: fractalTerrain(size, opts),
    transform: [512000, 10, 0, 5874000 + size * 10, 0, -10], crs: { epsg: 32633, geographic: false }, nodata: -9999,
  });
  await tif('ties-160.tif', 160, { seed: 5, quantum: 2 });
  await tif('rough-1000.tif', 1000, {});
  // scattered samples of a rough field
  const rnd = makeRandom(99), pts = [];
  for (let k = 0; k < 3000; k++) {
    const x = (rnd() + 1) * 500, y = (rnd() + 1) * 500;
    pts.push(`${x} ${y} ${Math.sin(x / 37) * Math.cos(y / 53) * 20 + Math.sin((x + y) / 11) * 3}`);
  }
  writeFileSync(join(dir, 'scattered.txt'), pts.join('\n') + '\n');
  const mb = ['# x y energy'];
  for (let y = 2.0; y >= -0.5 - 1e-9; y -= 0.02) for (let x = -1.5; x <= 1.2 + 1e-9; x += 0.02) mb.push(`${x.toFixed(2)} ${y.toFixed(2)} ${muellerBrown(+x.toFixed(2), +y.toFixed(2))}`);
  writeFileSync(join(dir, 'mb.txt'), mb.join('\n') + '\n');
  const { dihedralScan } = await import(pathToFileURL(join(ROOT, 'dist/demo/generate.js')).href);
  writeFileSync(join(dir, 'scan.txt'), dihedralScan(10).text);
}

function cases(inputs, big) {
  const fx = join(ROOT, 'fixtures/io');
  const list = [];
  for (const f of readdirSync(fx).sort()) {
    if (!/\.(tif|npy)$/.test(f)) continue;
    list.push([`fx-${f}-json`, ['survey', join(fx, f), '--json']]);
    list.push([`fx-${f}-out`, ['survey', join(fx, f), '-o', 'OUT']]);
  }
  const t = join(inputs, 'ties-160.tif');
  list.push(['ties-json', ['survey', t, '--json']]);
  list.push(['ties-out', ['survey', t, '-o', 'OUT']]);
  list.push(['ties-closed', ['survey', t, '--boundary', 'closed', '-o', 'OUT']]);
  list.push(['ties-periodic', ['survey', t, '--boundary', 'periodic', '-o', 'OUT']]);
  list.push(['ties-px', ['survey', t, '--boundary', 'periodic-x', '--json']]);
  list.push(['ties-c4', ['survey', t, '--connectivity', '4', '-o', 'OUT']]);
  list.push(['ties-c6', ['survey', t, '--connectivity', '6', '--json']]);
  list.push(['ties-mp', ['survey', t, '--min-persistence', '3', '-o', 'OUT']]);
  list.push(['ties-mp-json', ['survey', t, '--min-persistence', '7.5', '--json']]);
  list.push(['ties-nodata', ['survey', t, '--nodata', '400', '-o', 'OUT']]);
  const s = join(inputs, 'scattered.txt');
  list.push(['mesh-json', ['survey', s, '--json']]);
  list.push(['mesh-out', ['survey', s, '--min-persistence', '1', '-o', 'OUT']]);
  list.push(['mb-survey', ['survey', join(inputs, 'mb.txt'), '--boundary', 'closed', '-o', 'OUT']]);
  list.push(['bar-mb', ['barriers', join(inputs, 'mb.txt'), '-o', 'OUT']]);
  list.push(['bar-mb-json', ['barriers', join(inputs, 'mb.txt'), '--json']]);
  list.push(['bar-scan', ['barriers', join(inputs, 'scan.txt'), '--units', 'kJ/mol', '--periodic', '-o', 'OUT']]);
  list.push(['bar-scan-json', ['barriers', join(inputs, 'scan.txt'), '--units', 'kJ/mol', '--periodic', '--json']]);
  list.push(['bar-mesh', ['barriers', s, '--max-paths', '10', '-o', 'OUT']]);
  list.push(['bar-ties', ['barriers', t, '--max-paths', '5', '--images', '21', '-o', 'OUT']]);
  if (big) {
    const r = join(inputs, 'rough-1000.tif');
    list.push(['rough-json', ['survey', r, '--json']]);
    list.push(['rough-out', ['survey', r, '-o', 'OUT']]);
    list.push(['rough-mp', ['survey', r, '--min-persistence', '2', '-o', 'OUT']]);
  }
  return list;
}

function save(dir, inputs, sill, big) {
  mkdirSync(dir, { recursive: true });
  for (const [name, args] of cases(inputs, big)) {
    const caseDir = join(dir, name);
    rmSync(caseDir, { recursive: true, force: true });
    mkdirSync(caseDir, { recursive: true });
    // the output folder is named relative to the case folder, so summaries print the same path
    const p = spawnSync(process.execPath, ['--max-old-space-size=8192', sill, ...args], { cwd: caseDir, maxBuffer: 1 << 30 });
    writeFileSync(join(caseDir, '_stdout'), p.stdout ?? '');
    writeFileSync(join(caseDir, '_stderr'), p.stderr ?? '');
    writeFileSync(join(caseDir, '_code'), String(p.status ?? p.signal));
    process.stderr.write(`${name}: exit ${p.status ?? p.signal}\n`);
  }
}

function files(dir) {
  const out = [];
  const walk = (d) => {
    for (const f of readdirSync(d).sort()) {
      const p = join(d, f);
      if (statSync(p).isDirectory()) walk(p);
      else if (f !== 'report.html' && !f.startsWith('.sill-')) out.push(relative(dir, p));
    }
  };
  walk(dir);
  return out;
}

function compare(a, b) {
  const fa = files(a), fb = new Set(files(b));
  let bad = 0, same = 0, negZero = 0;
  for (const f of fa) {
    if (!fb.has(f)) { console.log(`only in ${a}: ${f}`); bad++; continue; }
    fb.delete(f);
    const x = readFileSync(join(a, f)), y = readFileSync(join(b, f));
    if (x.equals(y)) { same++; continue; }
    // the one intended difference: −0 written "-0" where it used to be "0"
    if (x.toString('latin1').replace(/-0(?![.\d])/g, '0') === y.toString('latin1').replace(/-0(?![.\d])/g, '0')) { negZero++; console.log(`differs only by -0: ${f}`); continue; }
    console.log(`differs: ${f}`);
    bad++;
  }
  for (const f of fb) { console.log(`only in ${b}: ${f}`); bad++; }
  console.log(`${same} identical, ${negZero} differing only by -0, ${bad} different or missing`);
  process.exit(bad ? 1 : 0);
}

if (mode === 'inputs') await writeInputs(resolve(rest[0]));
else if (mode === 'save') {
  const at = (flag, d) => { const i = rest.indexOf(flag); return i >= 0 ? rest[i + 1] : d; };
  save(resolve(rest[0]), resolve(rest[1]), resolve(at('--sill', join(ROOT, 'dist/cli/main.js'))), rest.includes('--big'));
} else if (mode === 'compare') compare(resolve(rest[0]), resolve(rest[1]));
else {
  console.error('usage: survey-outputs.mjs inputs DIR | save DIR INPUTS [--sill PATH] [--big] | compare A B');
  process.exit(2);
}
