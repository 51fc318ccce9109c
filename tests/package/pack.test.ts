/**
 * The package as a user gets it: `npm pack`, the tarball installed into an empty folder (from the
 * npm cache that `npm ci` filled, at the versions package-lock.json pins), then used from
 * plain ESM JavaScript (the first section of docs/library.md, run without dist/cli), from
 * TypeScript (`tsc --noEmit` against the shipped types, strict, library checking on) and from
 * the command line. The tarball holds what a user needs and nothing else. Common practice: test
 * a package from its tarball in a clean folder, as npm's own documentation of `npm pack` suggests.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { copyFileSync, existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { librarySections, runBlock, root } from './helpers.js';

interface PackEntry { filename: string; size: number; unpackedSize: number; files: { path: string; size: number }[] }

const npm = (args: string[], cwd: string, env: Record<string, string> = {}) => {
  const r = spawnSync('npm', args, { cwd, encoding: 'utf8', timeout: 280_000, env: { ...process.env, npm_config_update_notifier: 'false', ...env } });
  if (r.status !== 0) throw new Error(`npm ${args.join(' ')} failed in ${cwd}:\n${r.stderr}`);
  return r.stdout;
};

let work = '';
let pack: PackEntry;
let app = '';

beforeAll(() => {
  expect(existsSync(join(root, 'dist', 'index.js')), 'dist/index.js is missing: run npm run build first').toBe(true);
  work = mkdtempSync(join(tmpdir(), 'sill-pack-'));
  [pack] = JSON.parse(npm(['pack', '--json', '--pack-destination', work], root)) as PackEntry[];
  console.log(`sill tarball: ${pack.filename}, ${(pack.size / 1024).toFixed(0)} KiB packed, ${(pack.unpackedSize / 1024).toFixed(0)} KiB unpacked, ${pack.files.length} files`);

  // An empty project that depends on the tarball only. Its lockfile pins sill's dependencies at the
  // versions this checkout's package-lock.json holds, so `npm ci --offline` takes them from the cache.
  app = join(work, 'app');
  mkdirSync(app);
  const tgz = join(work, pack.filename);
  const pkg = JSON.parse(readFileSync(join(root, 'package.json'), 'utf8'));
  const lock = JSON.parse(readFileSync(join(root, 'package-lock.json'), 'utf8')).packages as Record<string, { dev?: boolean }>;
  const packages: Record<string, unknown> = {
    '': { name: 'app', dependencies: { sill: `file:${tgz}` } },
    'node_modules/sill': {
      version: pkg.version, resolved: `file:${tgz}`, integrity: `sha512-${createHash('sha512').update(readFileSync(tgz)).digest('base64')}`,
      hasInstallScript: true, license: pkg.license, dependencies: pkg.dependencies, bin: pkg.bin, engines: pkg.engines,
    },
  };
  for (const [k, v] of Object.entries(lock)) if (k !== '' && !v.dev) packages[k] = v;
  writeFileSync(join(app, 'package.json'), JSON.stringify({ name: 'app', private: true, type: 'module', dependencies: { sill: `file:${tgz}` } }));
  // this machine's npm settings of the project (e.g. how a native dependency builds) apply to the user's folder too
  for (const rc of ['.npmrc', '.prebuild-installrc']) if (existsSync(join(root, rc))) copyFileSync(join(root, rc), join(app, rc));
  writeFileSync(join(app, 'package-lock.json'), JSON.stringify({ name: 'app', lockfileVersion: 3, requires: true, packages }));
  // the cache first; the npm registry only for what the cache lacks (a dependency with a native part,
  // if one is ever added, builds here too — hence the long timeout)
  npm(['ci', '--prefer-offline', '--no-audit', '--no-fund', '--omit=optional'], app);
}, 300_000);

afterAll(() => {
  if (work) rmSync(work, { recursive: true, force: true });
});

describe('the packed package', () => {
  it('holds what a user needs and no tests, fixtures, benchmarks, docs, sources or source maps', () => {
    const files = pack.files.map((f) => f.path);
    for (const need of ['package.json', 'README.md', 'dist/index.js', 'dist/index.d.ts', 'dist/cli/main.js', 'native/exchange.c', 'native/build.mjs']) {
      expect(files).toContain(need);
    }
    const unwanted = files.filter((f) => /^(tests|fixtures|bench|docs|src|scripts)\//.test(f) || /\.map$|\.test\.|^dist\/(tests|bench)\//.test(f) || /^native\/build\//.test(f));
    expect(unwanted).toEqual([]);
    // the package holds code and types only (about 0.35 MiB when this test was written)
    expect(pack.size).toBeLessThan(1024 * 1024);
  });

  it('installs with its addon built from source at install time (or a note saying why not)', () => {
    const installed = join(app, 'node_modules', 'sill');
    expect(existsSync(join(installed, 'dist', 'index.js'))).toBe(true);
    expect(existsSync(join(installed, 'src'))).toBe(false);
    if (process.platform === 'linux' && spawnSync('cc', ['--version']).status === 0) {
      expect(existsSync(join(installed, 'native', 'build', 'exchange.node'))).toBe(true);
    }
    // without a compiler the build says so in one line and exits 0 (sill falls back, docs/output-folders.md)
    const r = spawnSync(process.execPath, [join(installed, 'native', 'build.mjs')], {
      encoding: 'utf8', env: { ...process.env, CC: '/nonexistent/cc' }, cwd: app,
    });
    expect(r.status).toBe(0);
  });

  it('runs the first example of docs/library.md from plain ESM JavaScript, without dist/cli, and its command line', () => {
    const [first] = librarySections();
    // the command line of the installed package works
    const cli = spawnSync(join(app, 'node_modules', '.bin', 'sill'), ['--version'], { encoding: 'utf8', cwd: app });
    expect(cli.status, cli.stderr).toBe(0);
    // nothing under dist/cli is needed to use the library
    rmSync(join(app, 'node_modules', 'sill', 'dist', 'cli'), { recursive: true });
    first.blocks.forEach((b, k) => {
      const r = runBlock(app, b, `example-${k}`);
      expect(r.status, `docs/library.md line ${b.line}:\n${r.stderr}`).toBe(0);
    });
    expect(readFileSync(join(app, 'depressions.geojson'), 'utf8')).toMatch(/^\{"type":"FeatureCollection"/);
    // CommonJS is not offered: the exports map says so instead of loading the wrong thing
    const cjs = spawnSync(process.execPath, ['-e', "try { require('sill') } catch (e) { console.log(e.code) }"], { encoding: 'utf8', cwd: app });
    expect(cjs.stdout.trim()).toBe('ERR_PACKAGE_PATH_NOT_EXPORTED');
  });

  it('type-checks a TypeScript program against the shipped types (strict, declarations checked)', () => {
    writeFileSync(join(app, 'check.ts'), `
import { readSurface, gridFromArray, ponds, survey, barriers, runoff, writeDepressionsGeoJson, InputError, SelfCheckError,
  type PondsRun, type DepressionRecord, type SurveyReport, type PondsOptions, type Surface } from 'sill';

const grid: Surface = gridFromArray(new Float32Array(16), { width: 4, crs: { epsg: 32633 } });
const options: PondsOptions = { minDepth: 0.1, labelLevel: 'top', threads: 1 };
const run: PondsRun = ponds(grid, options);
const largest: DepressionRecord[] = run.report.depressions.largest(5);
const volumes: Float64Array = run.report.depressions.columns.volume;
const report: SurveyReport = survey(grid, { boundary: 'periodic', minPersistence: 0.5 }).report;
const persistence: number = report.pairs.top(1)[0]?.persistence ?? 0;
const forward: number | null = barriers(grid, { units: 'kJ/mol', to: 'kcal/mol' }).report.barriers[0]?.forward ?? null;
const ponded: number = runoff(grid, { depth: '25mm' }).report.water.ponded;
const traced: number = writeDepressionsGeoJson('d.geojson', run, 'all');
async function read(): Promise<Surface> { return readSurface('dem.tif', { band: 1, layout: 'matrix' }); }
function kind(e: unknown): string { return e instanceof InputError ? 'input' : e instanceof SelfCheckError ? 'self-check' : 'other'; }
// @ts-expect-error connectivity is 4, 6 or 8
ponds(grid, { connectivity: 5 });
// @ts-expect-error the runoff depth is a number of metres or a text with its unit
runoff(grid, { depth: true });
export { largest, volumes, persistence, forward, ponded, traced, read, kind };
`);
    writeFileSync(join(app, 'tsconfig.json'), JSON.stringify({
      compilerOptions: {
        module: 'NodeNext', moduleResolution: 'NodeNext', target: 'ES2022', strict: true, noEmit: true, skipLibCheck: false,
        types: ['node'], typeRoots: [join(root, 'node_modules', '@types')],
      },
      files: ['check.ts'],
    }));
    const tsc = spawnSync(process.execPath, [join(root, 'node_modules', 'typescript', 'bin', 'tsc'), '-p', 'tsconfig.json'], { cwd: app, encoding: 'utf8', timeout: 170_000 });
    expect(tsc.stdout + tsc.stderr).toBe('');
    expect(tsc.status).toBe(0);
  }, 180_000);
});
