/**
 * `sill batch <command> INPUTS... -o DIR [that command's options]`: each input analysed on its own
 * by the normal command, as a child process, into DIR/<input stem>/; then DIR/catalogue.csv and
 * DIR/catalogue.json, one row per input. Wiring only: the plan and the catalogue are in
 * src/cluster/batch.ts, the engines in src/cluster/engine.ts and slurm.ts.
 */
import { cpus } from 'node:os';
import { existsSync, readFileSync, readdirSync, realpathSync, rmSync } from 'node:fs';
import { join, relative, resolve, isAbsolute } from 'node:path';
import { Command, Option } from 'commander';
import { InputError } from '../errors.js';
import { checkFolder } from '../io/outdir.js';
import { inputCells } from '../io/dimensions.js';
import {
  ANALYSE, BATCH_COMMANDS, CATALOGUE, batchInputs, deciding, batchStages, finished, foreignEntries, writeCatalogue,
  type BatchCommand, type BatchSpec, type Catalogue,
} from '../cluster/batch.js';
import { RunFolder, type RunSpec } from '../cluster/run-folder.js';
import { LocalEngine, type Engine } from '../cluster/engine.js';
import { SlurmEngine, slurmMissing } from '../cluster/slurm.js';
import { BYTES_PER_CELL } from './budget.js';
import { parseNumber, Progress } from './common.js';

export interface BatchCliOptions {
  out?: string;
  workers?: string;
  resume?: boolean;
  force?: boolean;
  quiet?: boolean;
  scheduler?: string;
  runDir?: string;
  dryRun?: boolean;
  partition?: string;
  account?: string;
  time?: string;
  memPerTask?: string;
}

/** Options of the analysis that make no sense per input of a batch. */
const REFUSED: Record<string, string> = {
  '--json': '--json prints one report on stdout; a batch writes each input\'s report.json into DIR/<input stem>/, so leave it out',
};

export function registerBatch(program: Command): void {
  program
    .command('batch')
    .description('analyse many inputs, each on its own, into DIR/<input stem>/ with one catalogue row per input (DIR/catalogue.csv, .json)')
    .argument('<command>', `the analysis for every input: ${BATCH_COMMANDS.join(', ')}`)
    .argument('<inputs...>', 'the inputs, and that command\'s options (as for the command itself)')
    .option('-o, --out <dir>', 'the batch folder: one folder per input, the catalogue, and the run folder')
    .option('--workers <n>', 'inputs analysed at a time (default: the number of cores; with --scheduler slurm: the array\'s limit, none by default)')
    .option('--resume', 'keep the inputs an earlier run of the same batch into DIR finished, redo the rest')
    .option('--force', 'write into a DIR that holds files sill did not write (they are kept)')
    .addOption(new Option('--scheduler <engine>', 'where the inputs run: local (child processes on this machine) or slurm (a job array)').choices(['local', 'slurm']).default('local'))
    .option('--run-dir <dir>', 'the run folder (stage specs, task statuses, logs, sbatch scripts; on a file system every node sees); default DIR/.sill-run')
    .option('--dry-run', 'with --scheduler slurm: only write the sbatch scripts and submit.sh into the run folder')
    .option('--partition <name>', 'Slurm partition of the jobs')
    .option('--account <name>', 'Slurm account of the jobs')
    .option('--time <limit>', 'Slurm time limit per input, as sbatch takes it (e.g. 2:00:00)')
    .option('--mem-per-task <MiB>', 'memory per input for Slurm (default: estimated from the input\'s cells)')
    .option('--quiet', 'no progress or summary on the terminal (failures are still listed on stderr)')
    .allowUnknownOption()
    .addHelpText('after', '\nEvery other option is passed to the command for each input, e.g.\n  sill batch ponds tiles/*.tif -o out --min-depth 0.1 --workers 4\nSee docs/batch.md.')
    .action(async function (this: Command, command: string, rest: string[], opts: BatchCliOptions) {
      await runBatchCommand(program, command, rest, opts);
    });
  program
    .command('batch-catalogue', { hidden: true })
    .description('the last stage of a batch: write DIR/catalogue.csv and catalogue.json from a run folder')
    .argument('<run-dir>')
    .action((runDir: string) => {
      writeCatalogue(resolve(runDir));
    });
}

/** Split the words after the command into inputs and the command's options (checked against its own option list). */
export function splitArgs(program: Command, command: BatchCommand, words: string[]): { inputs: string[]; args: string[]; threads?: string } {
  const cmd = program.commands.find((c) => c.name() === command)!;
  const inputs: string[] = [];
  const args: string[] = [];
  let threads: string | undefined;
  for (let k = 0; k < words.length; k++) {
    const w = words[k];
    if (w === '--') {
      inputs.push(...words.slice(k + 1));
      break;
    }
    if (!w.startsWith('-') || w === '-') {
      inputs.push(w);
      continue;
    }
    const eq = w.indexOf('=');
    const flag = w.startsWith('--') && eq > 0 ? w.slice(0, eq) : w;
    if (REFUSED[flag]) throw new InputError(REFUSED[flag]);
    const opt = cmd.options.find((o) => o.long === flag || o.short === flag);
    if (!opt) throw new InputError(`${flag} is not an option of sill ${command} or of sill batch; see 'sill ${command} --help' and 'sill batch --help'`);
    let value: string | undefined;
    if (opt.required || opt.optional) {
      if (flag !== w) value = w.slice(eq + 1);
      else if (k + 1 < words.length && (opt.required || !words[k + 1].startsWith('-'))) value = words[++k];
      else if (opt.required) throw new InputError(`${flag} needs a value; see 'sill ${command} --help'`);
    }
    if (opt.long === '--threads') {
      threads = value;
      continue;
    }
    args.push(flag, ...(value !== undefined ? [value] : []));
  }
  return { inputs, args, threads };
}

/** Memory for one input's run (MiB): the command's bytes per cell twice over (features, outputs), plus the processes themselves; in steps of 64 MiB. */
export function memoryFor(command: BatchCommand, cells: number): number {
  const bytes = 256 * 2 ** 20 + 2 * BYTES_PER_CELL[command] * cells;
  return Math.ceil(bytes / (64 * 2 ** 20)) * 64;
}

const sameList = (a: readonly string[], b: readonly string[]) => a.length === b.length && a.every((x, i) => x === b[i]);

export async function runBatchCommand(program: Command, command: string, words: string[], opts: BatchCliOptions): Promise<Catalogue> {
  if (!(BATCH_COMMANDS as readonly string[]).includes(command)) {
    throw new InputError(`sill batch runs one of ${BATCH_COMMANDS.join(', ')} on every input, got '${command}'; e.g. sill batch ponds a.tif b.tif -o out`);
  }
  const cmdName = command as BatchCommand;
  if (!opts.out) throw new InputError('sill batch writes one folder per input: give the batch folder with -o/--out');
  const slurm = opts.scheduler === 'slurm';
  if (opts.dryRun && !slurm) throw new InputError('--dry-run writes the sbatch scripts of --scheduler slurm; add --scheduler slurm');
  const { inputs: given, args, threads: threadsGiven } = splitArgs(program, cmdName, words);
  if (given.length === 0) throw new InputError(`no inputs: give the files after the command, e.g. sill batch ${cmdName} a.tif b.tif -o ${opts.out}`);
  const workers = opts.workers === undefined ? undefined
    : parseNumber('--workers', opts.workers, { integer: true, min: 1, max: 4096, why: 'more workers than that exhaust the process table' });
  const memOverride = opts.memPerTask === undefined ? undefined : parseNumber('--mem-per-task', opts.memPerTask, { integer: true, min: 64, max: 2 ** 30 });
  for (const [flag, v] of [['--partition', opts.partition], ['--account', opts.account], ['--time', opts.time]] as const) {
    if (v !== undefined && !slurm) throw new InputError(`${flag} is for --scheduler slurm; add it, or leave ${flag} out`);
    if (v !== undefined && !/^[A-Za-z0-9_.:,+\-]+$/.test(v)) throw new InputError(`${flag} '${v}' holds characters Slurm does not take; give a plain name or time`);
  }

  if (slurm && !opts.dryRun) {
    const why = slurmMissing();
    if (why !== null) throw new InputError(`--scheduler slurm submits jobs with sbatch, but ${why}; run the batch on a Slurm login node, or add --dry-run to only write the scripts`);
  }

  // the inputs: present, one stem each, none inside DIR
  for (const input of given) {
    if (!existsSync(input)) throw new InputError(`input ${input} does not exist; check the path (a batch checks every input before it starts)`);
  }
  const inputs = batchInputs(given, opts.out);
  const { dir: out } = checkFolder(opts.out);
  for (const x of inputs) {
    const rel = relative(out, realpathSync(x.input));
    if (rel && !rel.startsWith('..') && !isAbsolute(rel)) throw new InputError(`input ${x.input} is inside the batch folder ${opts.out}; copy it elsewhere or write to another folder`);
  }
  const runDir = opts.runDir ? resolve(opts.runDir) : join(out, '.sill-run');
  const run = new RunFolder(runDir);
  const old = existsSync(run.specPath) ? run.run<BatchSpec>() : null;
  if (existsSync(runDir) && !old && readdirSync(runDir).length > 0) {
    throw new InputError(`run folder ${runDir} holds files but no run of sill; give an empty or new folder to --run-dir`);
  }
  if (old && old.extra?.kind !== 'sill/batch@1') throw new InputError(`run folder ${runDir} holds another kind of run; give another --run-dir`);
  const stems = new Set(inputs.map((x) => x.stem));
  const previous = old ? [...new Set([...old.extra.inputs.map((x) => x.stem), ...old.extra.previous])].filter((s) => !stems.has(s)) : [];
  const foreign = foreignEntries(out, runDir, old ? [...old.extra.inputs.map((x) => x.stem), ...old.extra.previous] : []);
  if (foreign.length > 0 && !opts.force) {
    const some = foreign.slice(0, 3).join(', ') + (foreign.length > 3 ? ', …' : '');
    throw new InputError(`batch folder ${opts.out} holds files sill did not write (${some}); choose a new or empty folder, or add --force to write beside them (they are kept)`);
  }

  // each input's threads: the cores shared among the local workers (Slurm: one core per task unless --threads)
  const cores = cpus().length;
  const w = workers ?? (slurm ? undefined : cores);
  const threads = threadsGiven !== undefined
    ? parseNumber('--threads', threadsGiven, { integer: true, min: 1, max: 256 })
    : slurm ? 1 : Math.max(1, Math.floor(cores / Math.min(w!, inputs.length)));
  const childArgs = [...args, '--threads', String(threads), ...(opts.force ? ['--force'] : [])];
  const spec: BatchSpec = { kind: 'sill/batch@1', command: cmdName, out, inputs, args: childArgs, previous };
  const memory = inputs.map((x) => memOverride ?? memoryFor(cmdName, inputCells(x.input)));
  const stages = batchStages(spec, runDir, memory, threads);

  let resumed = 0;
  if (opts.resume && old) {
    const o = old.extra;
    if (o.command !== cmdName || o.out !== out || !sameList(deciding(o.args), deciding(childArgs)) || !sameList(o.inputs.map((x) => x.input), given)) {
      throw new InputError(`the batch in ${opts.out} was run with other inputs or options (sill batch ${o.command} with ${o.inputs.length} inputs${deciding(o.args).length ? `, ${deciding(o.args).join(' ')}` : ''}); give the same ones to --resume, or leave --resume out to start over`);
    }
    spec.previous = o.previous;
    for (let i = 0; i < inputs.length; i++) {
      if (finished(run, o, i)) resumed++;
      else run.clearStatus(ANALYSE, i);
    }
    run.clearStatus(CATALOGUE, 0);
  } else if (old) {
    rmSync(runDir, { recursive: true, force: true });
  }
  const runSpec: RunSpec<BatchSpec> = { schema: 'sill/run@1', stages: stages.map((s) => s.name), extra: spec };
  run.create(runSpec, stages);

  const engine: Engine = slurm
    ? new SlurmEngine({ workers, partition: opts.partition, account: opts.account, time: opts.time, dryRun: opts.dryRun, pollSeconds: Number(process.env.SILL_SLURM_POLL) || undefined })
    : new LocalEngine(w!);
  if (opts.dryRun) {
    const written = (engine as SlurmEngine).writeScripts(run);
    if (!opts.quiet) process.stdout.write(`wrote ${written.map((p) => relative(process.cwd(), p) || p).join(', ')}\nsubmit with: bash ${relative(process.cwd(), written[written.length - 1])}\n`);
    return { schema: 'sill/batch-catalogue@1', command: cmdName, options: childArgs, inputs: inputs.length, ok: 0, failed: 0, rows: [] };
  }

  const progress = new Progress(opts.quiet);
  if (resumed > 0) progress.stage(`${resumed} of ${inputs.length} inputs already finished; doing the rest`);
  await engine.run(run, (p) => {
    if (p.stage === ANALYSE) progress.stage(`${cmdName}: ${p.done}/${p.tasks} inputs done${p.failed ? `, ${p.failed} failed` : ''}${p.running ? `, ${p.running} running` : ''}`);
    else progress.stage('writing the catalogue');
  });
  progress.done();
  const cs = run.status(CATALOGUE, 0);
  if (!cs?.ok) throw new Error(`the catalogue step of the batch failed (${cs?.error ?? 'it did not run'}); its log is ${run.logPath(CATALOGUE, 0)}; rerun with --resume`);
  const catalogue = JSON.parse(readFileSync(join(out, 'catalogue.json'), 'utf8')) as Catalogue;
  if (!opts.quiet) {
    process.stdout.write(`batch ${cmdName}: ${catalogue.ok} of ${catalogue.inputs} inputs ok${catalogue.failed ? `, ${catalogue.failed} failed` : ''}` +
      `${resumed ? ` (${resumed} finished before)` : ''}; ${slurm ? 'on Slurm; ' : ''}catalogue in ${join(opts.out, 'catalogue.csv')}\n`);
  }
  if (catalogue.failed > 0) {
    for (const r of catalogue.rows) if (r.status !== 'ok') process.stderr.write(`sill: ${r.input}: ${r.error}\n`);
    throw new BatchFailed(`${catalogue.failed} of ${catalogue.inputs} inputs failed (listed above; their rows in ${join(opts.out, 'catalogue.csv')} say why); rerun with --resume after fixing them`);
  }
  return catalogue;
}

/** Some inputs of a batch failed: a runtime failure (exit 1) after the others finished. */
export class BatchFailed extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'BatchFailed';
  }
}
