/**
 * Batches of independent inputs (DESIGN §8): each input analysed on its own by the normal command
 * into DIR/<input stem>/ (an output-folder transaction, so it exists complete or not at all), then
 * one catalogue row per input in DIR/catalogue.csv and DIR/catalogue.json. As stages of a run
 * folder: `analyse` (an array, one task per input) and `catalogue` (one task, after all of
 * `analyse` ended, failed ones included).
 */
import { basename, extname, join, relative } from 'node:path';
import { hostname } from 'node:os';
import { randomBytes } from 'node:crypto';
import { existsSync, readdirSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { InputError } from '../errors.js';
import { readJsonMembers } from '../io/json-head.js';
import { removeStaleStaging } from '../io/outdir.js';
import { RunFolder, type StageSpec, type TaskStatus } from './run-folder.js';

export const BATCH_COMMANDS = ['survey', 'ponds', 'runoff', 'barriers'] as const;
export type BatchCommand = (typeof BATCH_COMMANDS)[number];

export const ANALYSE = 'analyse';
export const CATALOGUE = 'catalogue';
export const CATALOGUE_FILES = ['catalogue.csv', 'catalogue.json'];

export interface BatchInput {
  /** The path as given. */
  input: string;
  /** The folder name in DIR. */
  stem: string;
}

/** What run.json keeps of a batch (the `extra` of the run). */
export interface BatchSpec {
  kind: 'sill/batch@1';
  command: BatchCommand;
  /** DIR, absolute. */
  out: string;
  inputs: BatchInput[];
  /** The command's options, passed to every input's run. */
  args: string[];
  /** Folders of an earlier batch in DIR that this one does not write: removed with the catalogue. */
  previous: string[];
}

/** The folder name of an input: its file name without the extension (a folder: its name). */
export function stemOf(input: string): string {
  const name = basename(input.replace(/[\\/]+$/, ''));
  let isDir = false;
  try { isDir = statSync(input).isDirectory(); } catch { /* the check of the inputs says what is wrong */ }
  if (isDir) return name;
  const ext = extname(name);
  return ext && ext !== name ? name.slice(0, -ext.length) : name;
}

/** The inputs with their stems; two inputs with one stem, or a stem sill keeps for itself, are refused before any work. */
export function batchInputs(inputs: readonly string[], outGiven: string): BatchInput[] {
  const seen = new Map<string, string>();
  const out: BatchInput[] = [];
  for (const input of inputs) {
    const stem = stemOf(input);
    if (stem === '' || stem === '.' || stem === '..' || stem.startsWith('.sill') || CATALOGUE_FILES.includes(stem)) {
      throw new InputError(`input ${input} would write into ${join(outGiven, stem)}, a name sill keeps for itself; rename or copy the input`);
    }
    const key = stem.toLowerCase(); // case-insensitive file systems would merge them
    const other = seen.get(key);
    if (other !== undefined) {
      throw new InputError(other === input
        ? `input ${input} is given twice; give each input once`
        : `inputs ${other} and ${input} would both write into ${join(outGiven, stem)}/; rename one of them, or run them in two batches`);
    }
    seen.set(key, input);
    out.push({ input, stem });
  }
  return out;
}

/** The stages of a batch. `memoryMb[i]` is input i's memory estimate; `cpus` the threads each input's run uses. */
export function batchStages(b: BatchSpec, runDir: string, memoryMb: number[], cpus: number): StageSpec[] {
  const analyse: StageSpec = {
    schema: 'sill/stage@1', name: ANALYSE, after: [], cpus,
    tasks: b.inputs.map((x, i) => ({
      label: x.input, output: join(b.out, x.stem), memoryMb: memoryMb[i],
      argv: [b.command, x.input, '-o', join(b.out, x.stem), ...b.args, '--quiet'],
    })),
  };
  const catalogue: StageSpec = {
    schema: 'sill/stage@1', name: CATALOGUE, after: [{ stage: ANALYSE, when: 'any' }], cpus: 1,
    tasks: [{ label: 'catalogue', argv: ['batch-catalogue', runDir], memoryMb: 512 }],
  };
  return [analyse, catalogue];
}

/** The options that decide the results: all but --threads (any number gives the same results) and --force. */
export function deciding(args: readonly string[]): string[] {
  const out: string[] = [];
  for (let k = 0; k < args.length; k++) {
    if (args[k] === '--threads') k++;
    else if (args[k] !== '--force') out.push(args[k]);
  }
  return out;
}

/** True when input i's folder is the complete result its task reported (resume skips it). */
export function finished(run: RunFolder, b: BatchSpec, i: number): boolean {
  const s = run.status(ANALYSE, i);
  if (!s?.ok || s.outputRun === null) return false;
  try {
    const m = readJsonMembers(join(b.out, b.inputs[i].stem, '.sill-manifest.json'), ['run']);
    return m.run === s.outputRun;
  } catch {
    return false;
  }
}

// ---------------------------------------------------------------- the catalogue

/** A catalogue column: CSV header, JSON key, and where its value comes from in report.json. */
interface Column { csv: string; json: string; get: (r: Report) => unknown }
type Report = Record<string, any>; // eslint-disable-line @typescript-eslint/no-explicit-any

const num = (v: unknown): number | null => (typeof v === 'number' && Number.isFinite(v) ? v : null);

const COMMON: Column[] = [
  { csv: 'width', json: 'width', get: (r) => num(r.surface?.width) },
  { csv: 'height', json: 'height', get: (r) => num(r.surface?.height) },
  { csv: 'cells', json: 'cells', get: (r) => num(r.surface?.validCells) },
  { csv: 'euler_characteristic', json: 'eulerCharacteristic', get: (r) => num(r.euler?.characteristic) },
  { csv: 'euler_holds', json: 'eulerHolds', get: (r) => (typeof r.euler?.holds === 'boolean' ? r.euler.holds : null) },
  { csv: 'euler_pits', json: 'eulerPits', get: (r) => num(r.euler?.pits) },
  { csv: 'euler_passes', json: 'eulerPasses', get: (r) => num(r.euler?.passes) },
  { csv: 'euler_peaks', json: 'eulerPeaks', get: (r) => num(r.euler?.peaks) },
];

/** Per command: its feature counts and totals. */
const BY_COMMAND: Record<BatchCommand, Column[]> = {
  survey: [
    { csv: 'kept_pits', json: 'keptPits', get: (r) => num(r.counts?.pits) },
    { csv: 'kept_passes', json: 'keptPasses', get: (r) => num(r.counts?.passes) },
    { csv: 'kept_peaks', json: 'keptPeaks', get: (r) => num(r.counts?.peaks) },
  ],
  ponds: [
    { csv: 'depressions', json: 'depressions', get: (r) => num(r.counts?.depressions) },
    { csv: 'volume', json: 'volume', get: (r) => num(r.totals?.volume) },
    { csv: 'area', json: 'area', get: (r) => num(r.totals?.area) },
    { csv: 'volume_unit', json: 'volumeUnit', get: (r) => r.units?.volume ?? null },
    { csv: 'area_unit', json: 'areaUnit', get: (r) => r.units?.area ?? null },
  ],
  runoff: [
    { csv: 'depressions', json: 'depressions', get: (r) => num(r.counts?.depressions) },
    { csv: 'ponds', json: 'ponds', get: (r) => num(r.counts?.ponds) },
    { csv: 'water_input', json: 'waterInput', get: (r) => num(r.water?.input) },
    { csv: 'water_ponded', json: 'waterPonded', get: (r) => num(r.water?.ponded) },
    { csv: 'water_outflow', json: 'waterOutflow', get: (r) => num(r.water?.outflow) },
    { csv: 'volume_unit', json: 'volumeUnit', get: (r) => r.units?.volume ?? null },
  ],
  barriers: [
    { csv: 'minima', json: 'minima', get: (r) => num(r.counts?.minima) },
    { csv: 'transition_states', json: 'transitionStates', get: (r) => num(r.counts?.transitionStates) },
    { csv: 'barriers', json: 'barriers', get: (r) => num(r.counts?.barriers) },
  ],
};

/** The report.json members the catalogue reads. */
const MEMBERS = ['surface', 'euler', 'counts', 'totals', 'water', 'units'];

export interface CatalogueRow {
  input: string;
  folder: string;
  status: 'ok' | 'failed';
  error: string | null;
  seconds: number | null;
  [key: string]: unknown;
}

export interface Catalogue {
  schema: 'sill/batch-catalogue@1';
  command: BatchCommand;
  options: string[];
  inputs: number;
  ok: number;
  failed: number;
  rows: CatalogueRow[];
}

function csvCell(v: unknown): string {
  if (v === null || v === undefined) return '';
  if (typeof v === 'number') return Number.isFinite(v) ? String(v) : '';
  const s = String(v);
  return /[",\n\r]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

/** One row per input, from the task statuses and each finished input's report.json. */
export function buildCatalogue(run: RunFolder, b: BatchSpec): Catalogue {
  const cols = [...COMMON, ...BY_COMMAND[b.command]];
  const rows: CatalogueRow[] = b.inputs.map((x, i) => {
    const s: TaskStatus | null = run.status(ANALYSE, i);
    const row: CatalogueRow = { input: x.input, folder: x.stem, status: 'failed', error: null, seconds: s ? s.seconds : null };
    let report: Report | null = null;
    if (s?.ok) {
      try {
        report = readJsonMembers(join(b.out, x.stem, 'report.json'), MEMBERS);
        row.status = 'ok';
      } catch (e) {
        row.error = `the run ended well but its report.json cannot be read (${(e as Error).message})`;
      }
    } else {
      row.error = s ? s.error ?? 'failed' : 'not run';
    }
    for (const c of cols) row[c.json] = report ? c.get(report) : null;
    // seconds last, as in the CSV (the one column that differs between two runs of the same batch)
    const { seconds, ...rest } = row;
    return { ...rest, seconds };
  });
  const ok = rows.filter((r) => r.status === 'ok').length;
  return { schema: 'sill/batch-catalogue@1', command: b.command, options: deciding(b.args), inputs: rows.length, ok, failed: rows.length - ok, rows };
}

export function catalogueCsv(c: Catalogue): string {
  const cols = [...COMMON, ...BY_COMMAND[c.command]];
  const head = ['input', 'folder', 'status', 'error', ...cols.map((k) => k.csv), 'seconds'];
  const keys = ['input', 'folder', 'status', 'error', ...cols.map((k) => k.json), 'seconds'];
  const lines = [head.join(',')];
  for (const r of c.rows) lines.push(keys.map((k) => csvCell(r[k])).join(','));
  return lines.join('\n') + '\n';
}

export function catalogueJson(c: Catalogue): string {
  const { rows, ...head } = c;
  const h = JSON.stringify(head, null, 1);
  return `${h.slice(0, h.lastIndexOf('}')).trimEnd()},\n "rows": [\n${rows.map((r) => `  ${JSON.stringify(r)}`).join(',\n')}\n ]\n}\n`;
}

/** Write a file of DIR whole: a hidden temporary (a staging name the next run removes if this one dies), then a rename. */
function writeInto(dir: string, name: string, text: string): void {
  const tmp = join(dir, `.sill-staging-${hostname().replace(/[^A-Za-z0-9.]/g, '_') || 'host'}-${process.pid}-${Date.now().toString(36)}${randomBytes(3).toString('hex')}`);
  writeFileSync(tmp, text);
  renameSync(tmp, join(dir, name));
}

/** The catalogue stage: write DIR/catalogue.csv and .json, and remove the folders of an earlier batch that this one did not write anew. */
export function writeCatalogue(runDir: string): Catalogue {
  const run = new RunFolder(runDir);
  const spec = run.run<BatchSpec>();
  if (!spec || spec.extra?.kind !== 'sill/batch@1') throw new Error(`${runDir} is not the run folder of a batch`);
  const b = spec.extra;
  const c = buildCatalogue(run, b);
  writeInto(b.out, 'catalogue.json', catalogueJson(c));
  writeInto(b.out, 'catalogue.csv', catalogueCsv(c));
  // DIR holds this batch's results only: an earlier batch's folders of inputs this one does not
  // have, and of inputs that failed this time (their old results would contradict the catalogue), go
  const stale = [...b.previous, ...c.rows.filter((r) => r.status !== 'ok').map((r) => r.folder)];
  for (const stem of stale) {
    const p = join(b.out, stem);
    if (existsSync(join(p, '.sill-manifest.json'))) rmSync(p, { recursive: true, force: true });
  }
  // staging folders of input runs that were killed (a batch stopped outright) and are dead by now
  removeStaleStaging(b.out);
  return c;
}

/** Entries of DIR a batch may replace or ignore; anything else is the user's (kept; refused without --force). */
export function foreignEntries(out: string, runDir: string, previous: readonly string[]): string[] {
  let names: string[];
  try {
    names = readdirSync(out);
  } catch {
    return [];
  }
  const own = new Set([...CATALOGUE_FILES, ...previous]);
  const runRel = relative(out, runDir).split(/[\\/]/)[0];
  return names.filter((n) => !own.has(n) && !n.startsWith('.sill-staging-') && n !== runRel && !existsSync(join(out, n, '.sill-manifest.json'))).sort();
}
