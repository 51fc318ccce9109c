/** `sill demo`: write the bundled (invented) demo inputs and run the main jobs on them. */
import type { Command } from 'commander';
import { readdirSync, existsSync } from 'node:fs';
import { join } from 'node:path';
import { checkFolder } from '../io/outdir.js';
import { larkmoorDem, larkmoorCulverts, dihedralScan, dihedralFrames, torsionDistanceLandscape } from '../demo/generate.js';
import { writeGeoTiff } from '../io/index.js';
import { runSurveyCommand } from './survey.js';
import { runPondsCommand } from './ponds.js';
import { runRunoffCommand } from './runoff.js';
import { runBarriersCommand, BARRIERS_FILES, BARRIERS3_FILES } from './barriers.js';
import { openOutput, GPKG_FILE } from './common.js';
import { SURVEY_FILES } from './survey.js';
import { PONDS_FILES } from './ponds.js';
import { RUNOFF_FILES } from './runoff.js';

interface DemoOptions { out?: string; quiet?: boolean; force?: boolean }

const REPORT = ['report.html', 'map.svg', 'tree.svg', 'persistence.svg'];

export function registerDemo(program: Command): void {
  program
    .command('demo')
    .description('write the bundled demo inputs (an invented upland DEM, a periodic energy scan, frames of a simulation on it and a three-variable free-energy grid) and run sill on them')
    .option('-o, --out <dir>', 'folder for the demo inputs and results', 'sill-demo')
    .option('--force', 'write into demo folders that hold files sill did not write (they are kept)')
    .option('--quiet', 'no summaries on the terminal')
    .action(async (opts: DemoOptions) => {
      await runDemo(opts.out ?? 'sill-demo', !!opts.quiet, !!opts.force);
    });
}

/**
 * The demo folder: inputs/ and one folder per run, each written as its own transaction
 * (src/io/outdir.ts); all of them are checked before anything is written.
 */
export async function runDemo(dir: string, quiet: boolean, force = false): Promise<void> {
  const root = checkFolder(dir).dir;
  const inputs = join(root, 'inputs');
  const force_ = { force };
  const inputsOut = openOutput({ out: join(dir, 'inputs'), force }, 'demo', ['larkmoor-dem.tif', 'larkmoor-culverts.csv', 'dihedral-scan.txt', 'dihedral-frames.txt', 'torsion-distance.txt'], [])!;
  for (const [sub, command, names] of [
    ['larkmoor-survey', 'survey', SURVEY_FILES], ['larkmoor-ponds', 'ponds', PONDS_FILES], ['larkmoor-ponds-culvert', 'ponds', PONDS_FILES], ['larkmoor-runoff', 'runoff', RUNOFF_FILES],
    ['dihedral-survey', 'survey', SURVEY_FILES], ['dihedral-barriers', 'barriers', BARRIERS_FILES], ['dihedral-frames-barriers', 'barriers', BARRIERS_FILES], ['torsion-distance-barriers', 'barriers', [...BARRIERS_FILES, ...BARRIERS3_FILES]],
  ] as const) openOutput({ out: join(dir, sub), force }, command, [...names, GPKG_FILE, ...REPORT], []);
  const log = (s: string) => { if (!quiet) process.stdout.write(s + '\n'); };

  const dem = larkmoorDem();
  const demPath = join(inputs, 'larkmoor-dem.tif');
  const scan = dihedralScan();
  const scanPath = join(inputs, 'dihedral-scan.txt');
  const culvertPath = join(inputs, 'larkmoor-culverts.csv');
  const frames = dihedralFrames();
  const framesPath = join(inputs, 'dihedral-frames.txt');
  const land3 = torsionDistanceLandscape();
  const land3Path = join(inputs, 'torsion-distance.txt');
  try {
    await writeGeoTiff(inputsOut.path('larkmoor-dem.tif'), { ...dem.grid, values: dem.grid.values, nodata: -9999 });
    inputsOut.write('larkmoor-culverts.csv', larkmoorCulverts());
    inputsOut.write('dihedral-scan.txt', scan.text);
    inputsOut.write('dihedral-frames.txt', frames.text);
    inputsOut.write('torsion-distance.txt', land3.text);
    await inputsOut.commit();
  } catch (e) {
    throw inputsOut.fail(e);
  }

  log(`== ${dem.description}`);
  log(`   input ${demPath}`);
  log(`-- sill survey ${demPath} --min-persistence 0.5 -o ${join(root, 'larkmoor-survey')} --report`);
  await runSurveyCommand(demPath, { out: join(root, 'larkmoor-survey'), ...force_, minPersistence: '0.5', connectivity: '8', boundary: 'open', quiet, report: true });
  log(`-- sill ponds ${demPath} --min-depth 0.05 -o ${join(root, 'larkmoor-ponds')} --report`);
  await runPondsCommand(demPath, { out: join(root, 'larkmoor-ponds'), ...force_, minDepth: '0.05', connectivity: '8', boundary: 'open', quiet, report: true });
  log(`-- sill ponds ${demPath} --min-depth 0.05 --culverts ${culvertPath} -o ${join(root, 'larkmoor-ponds-culvert')} --report`);
  await runPondsCommand(demPath, { out: join(root, 'larkmoor-ponds-culvert'), ...force_, minDepth: '0.05', culverts: culvertPath, connectivity: '8', boundary: 'open', quiet, report: true });
  log(`-- sill runoff ${demPath} --depth 40mm -o ${join(root, 'larkmoor-runoff')} --report`);
  await runRunoffCommand(demPath, { out: join(root, 'larkmoor-runoff'), ...force_, depth: '40mm', connectivity: '8', boundary: 'open', quiet, report: true });
  log('');
  log(`== ${scan.description}`);
  log(`   input ${scanPath}`);
  log(`-- sill survey ${scanPath} --boundary periodic --min-persistence 1 -o ${join(root, 'dihedral-survey')} --report`);
  await runSurveyCommand(scanPath, { out: join(root, 'dihedral-survey'), ...force_, minPersistence: '1', connectivity: '8', boundary: 'periodic', quiet, report: true });
  log(`-- sill barriers ${scanPath} --units kJ/mol --periodic -o ${join(root, 'dihedral-barriers')} --report`);
  await runBarriersCommand(scanPath, { out: join(root, 'dihedral-barriers'), ...force_, units: 'kJ/mol', periodic: true, boundaryDefault: true, minPersistenceDefault: true, connectivity: '8', quiet, report: true });
  log('');
  log(`== ${frames.description}`);
  log(`   input ${framesPath}`);
  log(`-- sill barriers --samples ${framesPath} --bins 36,36 --periodic --units kJ/mol --cap 12 --resamples 50 -o ${join(root, 'dihedral-frames-barriers')}`);
  await runBarriersCommand(undefined, {
    out: join(root, 'dihedral-frames-barriers'), ...force_, samples: framesPath, bins: '36,36', units: 'kJ/mol', cap: '12', resamples: '50',
    periodic: true, boundaryDefault: true, minPersistenceDefault: true, connectivity: '8', quiet,
  });
  log('');
  log(`== ${land3.description}`);
  log(`   input ${land3Path}`);
  log(`-- sill barriers ${land3Path} --units kJ/mol --periodic-axes x,y --period 360,360 -o ${join(root, 'torsion-distance-barriers')}`);
  await runBarriersCommand(land3Path, {
    out: join(root, 'torsion-distance-barriers'), ...force_, units: 'kJ/mol', periodicAxes: 'x,y', period: '360,360', connectivity: '14', boundaryDefault: true, minPersistenceDefault: true, quiet,
  });
  log('');
  log(`demo results in ${root}`);
  // the reports, last, so the path to open is what the terminal ends with
  for (const run of readdirSync(root).sort()) if (existsSync(join(root, run, 'report.html'))) log(`report: ${join(root, run, 'report.html')}`);
}
