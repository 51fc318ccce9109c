/** `sill demo`: write the bundled (invented) demo inputs and run the main jobs on them. */
import type { Command } from 'commander';
import { mkdirSync, writeFileSync, readdirSync, existsSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { larkmoorDem, dihedralScan } from '../demo/generate.js';
import { writeGeoTiff } from '../io/index.js';
import { runSurveyCommand } from './survey.js';
import { runPondsCommand } from './ponds.js';
import { runRunoffCommand } from './runoff.js';
import { runBarriersCommand } from './barriers.js';

interface DemoOptions { out?: string; quiet?: boolean }

export function registerDemo(program: Command): void {
  program
    .command('demo')
    .description('write the bundled demo inputs (an invented upland DEM and a periodic energy scan) and run sill on them')
    .option('-o, --out <dir>', 'folder for the demo inputs and results', 'sill-demo')
    .option('--quiet', 'no summaries on the terminal')
    .action(async (opts: DemoOptions) => {
      await runDemo(opts.out ?? 'sill-demo', !!opts.quiet);
    });
}

export async function runDemo(dir: string, quiet: boolean): Promise<void> {
  const root = resolve(dir);
  const inputs = join(root, 'inputs');
  mkdirSync(inputs, { recursive: true });
  const log = (s: string) => { if (!quiet) process.stdout.write(s + '\n'); };

  const dem = larkmoorDem();
  const demPath = join(inputs, 'larkmoor-dem.tif');
  await writeGeoTiff(demPath, { ...dem.grid, values: dem.grid.values, nodata: -9999 });
  const scan = dihedralScan();
  const scanPath = join(inputs, 'dihedral-scan.txt');
  writeFileSync(scanPath, scan.text);

  log(`== ${dem.description}`);
  log(`   input ${demPath}`);
  log(`-- sill survey ${demPath} --min-persistence 0.5 -o ${join(root, 'larkmoor-survey')} --report`);
  await runSurveyCommand(demPath, { out: join(root, 'larkmoor-survey'), minPersistence: '0.5', connectivity: '8', boundary: 'open', quiet, report: true });
  log(`-- sill ponds ${demPath} --min-depth 0.05 -o ${join(root, 'larkmoor-ponds')} --report`);
  await runPondsCommand(demPath, { out: join(root, 'larkmoor-ponds'), minDepth: '0.05', connectivity: '8', boundary: 'open', quiet, report: true });
  log(`-- sill runoff ${demPath} --depth 40mm -o ${join(root, 'larkmoor-runoff')} --report`);
  await runRunoffCommand(demPath, { out: join(root, 'larkmoor-runoff'), depth: '40mm', connectivity: '8', boundary: 'open', quiet, report: true });
  log('');
  log(`== ${scan.description}`);
  log(`   input ${scanPath}`);
  log(`-- sill survey ${scanPath} --boundary periodic --min-persistence 1 -o ${join(root, 'dihedral-survey')} --report`);
  await runSurveyCommand(scanPath, { out: join(root, 'dihedral-survey'), minPersistence: '1', connectivity: '8', boundary: 'periodic', quiet, report: true });
  log(`-- sill barriers ${scanPath} --units kJ/mol --periodic -o ${join(root, 'dihedral-barriers')} --report`);
  await runBarriersCommand(scanPath, { out: join(root, 'dihedral-barriers'), units: 'kJ/mol', periodic: true, boundaryDefault: true, minPersistenceDefault: true, connectivity: '8', quiet, report: true });
  log('');
  log(`demo results in ${root}`);
  // the reports, last, so the path to open is what the terminal ends with
  for (const run of readdirSync(root).sort()) if (existsSync(join(root, run, 'report.html'))) log(`report: ${join(root, run, 'report.html')}`);
}
