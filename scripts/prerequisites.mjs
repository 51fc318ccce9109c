/**
 * The system programs some test groups need, how to find them, and the Debian packages that
 * provide them. Read by the test runner (scripts/test.mjs) before the suite and by the tests
 * themselves (tests/prereq.ts). Plain JavaScript: it runs before the TypeScript is built.
 *
 * Each program's place can be set by an environment variable (SILL_CHROMIUM, SILL_PYTHON,
 * SILL_GDALINFO); a place set that way is the user's choice and is never installed over.
 */
import { existsSync } from 'node:fs';
import { spawnSync } from 'node:child_process';

export const paths = {
  chromium: () => process.env.SILL_CHROMIUM || '/usr/bin/chromium',
  python: () => process.env.SILL_PYTHON || '/usr/bin/python3',
  gdalinfo: () => process.env.SILL_GDALINFO || '/usr/bin/gdalinfo',
};

const importable = (mod) => {
  const py = paths.python();
  return existsSync(py) && spawnSync(py, ['-c', `import ${mod}`], { stdio: 'ignore' }).status === 0;
};

/**
 * The groups of tests that need something outside npm. `missing()` returns a short reason when
 * the group cannot run, or null; `overridden()` is true when the user pointed a path variable
 * somewhere, so the runner reports instead of installing.
 */
export const GROUPS = [
  {
    id: 'browser',
    what: 'browser tests of the HTML reports (tests/browser)',
    packages: ['chromium'],
    missing: () => (existsSync(paths.chromium()) ? null : `no Chromium at ${paths.chromium()}`),
    overridden: () => !!process.env.SILL_CHROMIUM,
  },
  {
    id: 'gdal',
    what: 'GDAL read-back checks of the GeoTIFF and GeoJSON outputs',
    packages: ['gdal-bin', 'python3-gdal'],
    missing: () => {
      if (!existsSync(paths.python())) return `no Python at ${paths.python()}`;
      if (!importable('osgeo.gdal')) return `${paths.python()} cannot import osgeo.gdal`;
      if (!existsSync(paths.gdalinfo())) return `no gdalinfo at ${paths.gdalinfo()}`;
      return null;
    },
    overridden: () => !!process.env.SILL_PYTHON || !!process.env.SILL_GDALINFO,
  },
  {
    id: 'skimage',
    what: 'live scikit-image reference checks of the filled DEM',
    packages: ['python3-skimage'],
    missing: () => {
      if (!existsSync(paths.python())) return `no Python at ${paths.python()}`;
      return importable('skimage') ? null : `${paths.python()} cannot import skimage`;
    },
    overridden: () => !!process.env.SILL_PYTHON,
  },
  {
    id: 'numpy',
    what: 'the NumPy example of docs/library.md (tests/package)',
    packages: ['python3-numpy'],
    missing: () => {
      if (!existsSync(paths.python())) return `no Python at ${paths.python()}`;
      return importable('numpy') ? null : `${paths.python()} cannot import numpy`;
    },
    overridden: () => !!process.env.SILL_PYTHON,
  },
  {
    id: 'gudhi',
    what: 'live GUDHI persistence checks of 3-D grids (tests/morse/gudhi3.test.ts)',
    packages: ['python3-gudhi'],
    missing: () => {
      if (!existsSync(paths.python())) return `no Python at ${paths.python()}`;
      return importable('gudhi') ? null : `${paths.python()} cannot import gudhi`;
    },
    overridden: () => !!process.env.SILL_PYTHON,
  },
  {
    id: 'slurm',
    what: 'cluster tests against a local single-node Slurm (tests/cluster, scripts/slurm-local.mjs)',
    packages: ['slurmctld', 'slurmd', 'slurm-client', 'munge'],
    missing: () => {
      for (const p of ['/usr/sbin/slurmctld', '/usr/sbin/slurmd', '/usr/bin/sbatch', '/usr/bin/squeue', '/usr/bin/scontrol', '/usr/sbin/munged']) {
        if (!existsSync(p)) return `no ${p}`;
      }
      if (process.getuid && process.getuid() !== 0) return 'the local Slurm needs root';
      return null;
    },
    overridden: () => false,
  },
];

/** True when this process may install Debian packages: Linux with apt-get, as root or with passwordless sudo. */
export function installer() {
  if (process.platform !== 'linux' || !existsSync('/usr/bin/apt-get')) return null;
  if (process.getuid && process.getuid() === 0) return [];
  const sudo = spawnSync('sudo', ['-n', 'true'], { stdio: 'ignore' });
  return sudo.status === 0 ? ['sudo', '-n'] : null;
}

/** The ids of the groups the runner found missing (set by scripts/test.mjs for the test processes). */
export function skippedByRunner() {
  const s = process.env.SILL_TEST_SKIP;
  return s === undefined ? null : s.split(',').filter(Boolean);
}
