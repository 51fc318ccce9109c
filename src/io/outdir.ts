/**
 * Output folders as transactions: after a run, or a kill at any instant, `-o DIR` holds either the
 * complete previous result or the complete new one, plus at most one hidden staging folder that
 * the next run removes. docs/output-folders.md states the guarantee and the fallbacks.
 *
 * A run writes every file into a staging folder, then a manifest listing them (.sill-manifest.json,
 * written last: a staging folder with a manifest is complete), then commits in one of three ways:
 * - create:   DIR does not exist yet — rename the staging folder (a sibling of DIR) into place.
 * - exchange: the staging folder is a sibling of DIR; the files in DIR that sill did not write are
 *             hard-linked into it, then the two folders are swapped in one step (exchange.ts) and
 *             the old tree is removed.
 * - journal:  the fallback (no exchange, DIR a mount point, the parent not writable, DIR the working
 *             folder): the staging folder is inside DIR; an intent record (.sill-journal.json) lists
 *             what goes, then the files are moved in one by one and the record deleted. A kill in
 *             that window leaves a mix that the next run into DIR completes before anything else.
 * The next run removes what the previous manifest lists and nothing else.
 */
import {
  closeSync, fsyncSync, linkSync, lstatSync, mkdirSync, openSync, readFileSync, readdirSync, realpathSync,
  renameSync, rmSync, rmdirSync, statSync, unlinkSync, writeSync, writeFileSync, accessSync, chmodSync, chownSync, constants as fsc,
  type Stats,
} from 'node:fs';
import { basename, dirname, join, relative, resolve, isAbsolute, sep } from 'node:path';
import { hostname } from 'node:os';
import { randomBytes } from 'node:crypto';
import { InputError } from '../errors.js';
import { exchangeFolders, exchangeWay } from './exchange.js';

export const MANIFEST = '.sill-manifest.json';
export const JOURNAL = '.sill-journal.json';
export const STAGING_PREFIX = '.sill-staging-';
/** The run's temporary folder inside the staging folder (OutputFolder.scratch). */
const SCRATCH = '.sill-scratch';

export interface ManifestFile { name: string; size: number }

/** What a run wrote into its output folder (the file .sill-manifest.json). */
export interface Manifest {
  schema: 'sill/manifest@1';
  run: string;
  command: string;
  sillVersion: string;
  time: string;
  files: ManifestFile[];
  folders: string[];
}

interface Journal { schema: 'sill/journal@1'; staging: string; remove: string[]; folders: string[] }

/** What a run is about to write, checked before any work. */
export interface OutputPlan {
  /** The command writing (recorded in the manifest). */
  command: string;
  /** sill's version (recorded in the manifest). */
  version: string;
  /** Every name the run may write: 'report.json', 'paths/' (a folder of results), 'stage-volume-*.csv'. */
  names: readonly string[];
  /** Files the run reads: refused when a result would take their place or remove them. */
  inputs?: readonly (string | undefined)[];
  /** Write into a folder holding files sill did not write (kept; same-named ones replaced). */
  force?: boolean;
}

/** A file-system failure while writing results: a runtime failure (exit 1), one plain line. */
export class OutputError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'OutputError';
  }
}

const PLAIN: Record<string, string> = {
  ENOSPC: 'the disk is full',
  EDQUOT: 'the disk quota is used up',
  EROFS: 'the file system is read-only',
  EACCES: 'permission denied',
  EPERM: 'permission denied (operation not permitted)',
  ENOTDIR: 'a part of the path is a file, not a folder',
  EISDIR: 'a folder stands where a file should go',
  ENOENT: 'no such folder, or the file system does not allow creating one there',
  EIO: 'input/output error (the disk or network share failed)',
  EMFILE: 'too many open files',
  ENFILE: 'too many open files',
  ENAMETOOLONG: 'the path is too long',
  ELOOP: 'too many levels of symbolic links',
  EFBIG: 'a file is larger than the file system allows',
  EBUSY: 'the folder is busy (in use by the system)',
  EXDEV: 'the folder spans more than one file system',
  ENOTEMPTY: 'another process wrote to it at the same time',
  EEXIST: 'another process wrote to it at the same time',
};

/** The file-system reason in plain words, with the code for searching. */
export function plainReason(e: unknown): string {
  const code = (e as NodeJS.ErrnoException)?.code;
  if (code && PLAIN[code]) return `${PLAIN[code]} (${code})`;
  return code ? code : String((e as Error)?.message ?? e);
}

const isFsError = (e: unknown): boolean => typeof (e as NodeJS.ErrnoException)?.code === 'string' && /^E[A-Z]+$/.test((e as NodeJS.ErrnoException).code!);

const HOST = hostname().replace(/[^A-Za-z0-9.]/g, '_') || 'host';
const STAGING_RE = /^\.sill-staging-(?:(.*)-)?(\d+)-([0-9a-z]+)$/;

/** The id a run is known by: the supervising `sill` process's (SILL_RUN_PID, src/cli/main.ts), or this process's. */
function runPid(): number {
  const p = Number(process.env.SILL_RUN_PID);
  return Number.isSafeInteger(p) && p > 0 ? p : process.pid;
}

/**
 * Under the supervisor, the run must not outlive it: before a staging folder is made and at each
 * step of a commit, a run whose supervisor is gone (killed outright) kills itself as it was killed.
 * (A watchdog thread does the same between these points, src/cli/cli.ts.)
 */
function assertSupervised(): void {
  const p = Number(process.env.SILL_RUN_PID);
  if (process.env.SILL_SUPERVISED === '1' && Number.isSafeInteger(p) && p > 0 && process.ppid !== p) process.kill(process.pid, 'SIGKILL');
}

function stagingName(): string {
  assertSupervised();
  return `${STAGING_PREFIX}${HOST}-${runPid()}-${Date.now().toString(36)}${randomBytes(3).toString('hex')}`;
}

/** A staging folder of a run that is no longer alive on this host (or of an older sill without a host part). */
function isStale(name: string): boolean {
  const m = STAGING_RE.exec(name);
  if (!m) return false;
  if (m[1] !== undefined && m[1] !== HOST) return false;
  const pid = Number(m[2]);
  if (pid === process.pid || pid === runPid()) return false;
  try {
    process.kill(pid, 0);
    return false;
  } catch (e) {
    return (e as NodeJS.ErrnoException).code === 'ESRCH';
  }
}

function lstatOrNull(p: string): Stats | null {
  try {
    return lstatSync(p);
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code === 'ENOENT' || (e as NodeJS.ErrnoException).code === 'ENOTDIR') return null;
    throw e;
  }
}

/** mkdir -p one level at a time (Node's recursive mkdir loops for ever where mkdir answers ENOENT, as in /proc). Returns the first folder it made. */
function makeFolders(path: string): string | undefined {
  const missing: string[] = [];
  let p = path;
  while (lstatOrNull(p) === null) {
    missing.push(p);
    const up = dirname(p);
    if (up === p) break;
    p = up;
  }
  for (let k = missing.length - 1; k >= 0; k--) mkdirSync(missing[k]);
  return missing[missing.length - 1];
}

/** The manifest as JSON text, one file a line. */
function manifestText(m: Manifest): string {
  const { files, ...head } = m;
  const h = JSON.stringify(head, null, 1);
  return `${h.slice(0, h.lastIndexOf('}')).trimEnd()},\n "files": [\n${files.map((f) => `  ${JSON.stringify(f)}`).join(',\n')}\n ]\n}\n`;
}

/**
 * Check a folder that a run will create or write into (`sill demo` checks its top folder with this):
 * a folder or creatable — not a file, not on a read-only or unwritable file system. Returns its
 * absolute path (symbolic links resolved) and whether it exists.
 */
export function checkFolder(given: string): { dir: string; exists: boolean } {
  let abs = resolve(given);
  let st = lstatOrNull(abs);
  if (st?.isSymbolicLink()) {
    try {
      abs = realpathSync(abs);
    } catch {
      throw new InputError(`output folder ${given} is a symbolic link to something missing; give an existing folder or a new name to -o/--out`);
    }
    st = lstatOrNull(abs);
  }
  if (st && !st.isDirectory()) throw new InputError(`output path ${given} is a file, not a folder; choose another -o/--out`);
  let where = abs;
  if (!st) {
    where = dirname(abs);
    while (lstatOrNull(where) === null && dirname(where) !== where) where = dirname(where);
    let ast: Stats;
    try {
      ast = statSync(where);
    } catch (e) {
      throw new OutputError(`cannot create output folder ${given}: ${plainReason(e)}`);
    }
    if (!ast.isDirectory()) throw new InputError(`cannot create output folder ${given}: ${relative(process.cwd(), where) || where} is a file, not a folder; choose another -o/--out`);
  }
  const p = join(where, stagingName());
  try {
    mkdirSync(p);
  } catch (e) {
    throw new OutputError(`${st ? 'cannot write to output folder' : 'cannot create output folder'} ${given}: ${plainReason(e)}`);
  }
  rmdirSync(p);
  return { dir: abs, exists: !!st };
}

/**
 * Write a small file so that it is either absent or complete: a temporary name, then a rename. The
 * temporary is made in `tmpDir` — the run's staging folder (on the same file system as `path`), so a
 * kill before the rename leaves nothing but that staging folder, which the next run removes with it.
 * `at` names the fault-injection step between the write and the rename.
 */
function writeWhole(path: string, text: string, tmpDir: string, at?: string): void {
  const tmp = join(tmpDir, `${basename(path)}.${process.pid}.tmp`);
  const fd = openSync(tmp, 'w');
  try {
    writeSync(fd, text);
    fsyncSync(fd);
  } finally {
    closeSync(fd);
  }
  if (at) step(at);
  renameSync(tmp, path);
}

/** A JSON file's value, or null when there is no such file. */
export function readJson<T>(path: string): T | null {
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code === 'ENOENT') return null;
    throw e;
  }
  return JSON.parse(text) as T;
}

function validManifest(m: unknown): m is Manifest {
  const o = m as Manifest;
  return !!o && o.schema === 'sill/manifest@1' && Array.isArray(o.files) && o.files.every((f) => typeof f?.name === 'string' && safeName(f.name))
    && Array.isArray(o.folders) && o.folders.every((f) => typeof f === 'string' && safeName(f));
}

/** A relative name that stays inside its folder. */
function safeName(name: string): boolean {
  return name !== '' && !isAbsolute(name) && !name.split(/[\\/]/).some((p) => p === '..' || p === '' || p === '.');
}

/** Matches a name against a plan's names: exact, 'folder/' (anything under it), or one '*' wildcard. */
function planMatcher(names: readonly string[]): (name: string) => boolean {
  const exact = new Set(names.filter((n) => !n.endsWith('/') && !n.includes('*')));
  const folders = names.filter((n) => n.endsWith('/'));
  const patterns = names.filter((n) => n.includes('*')).map((n) => new RegExp(`^${n.split('*').map((s) => s.replace(/[.+?^${}()|[\]\\]/g, '\\$&')).join('[^/]*')}$`));
  return (name) => exact.has(name) || folders.some((f) => name.startsWith(f) || name === f.slice(0, -1)) || patterns.some((r) => r.test(name));
}

/** Every file (and symbolic link, or other non-folder) under `root`/`rel`, as relative names. */
function walkFiles(root: string, rel: string, out: string[]): void {
  for (const e of readdirSync(join(root, rel), { withFileTypes: true })) {
    const r = rel ? `${rel}/${e.name}` : e.name;
    if (e.isDirectory()) walkFiles(root, r, out);
    else out.push(r);
  }
}

/** Remove empty folders bottom-up from `rel` inside `root` (stops at the first that is not empty). */
function pruneEmpty(root: string, rel: string): void {
  let r = rel;
  while (r && r !== '.') {
    try {
      rmdirSync(join(root, r));
    } catch {
      return;
    }
    r = dirname(r);
  }
}

/** Complete an interrupted journal commit in `dir` (roll forward). */
function applyJournal(dir: string, journal: Journal): void {
  const staging = join(dir, journal.staging);
  const manifest = readJson<Manifest>(join(staging, MANIFEST));
  for (const name of journal.remove) {
    try { unlinkSync(join(dir, name)); } catch (e) { if ((e as NodeJS.ErrnoException).code !== 'ENOENT') throw e; }
  }
  if (manifest) {
    for (const f of manifest.files) {
      const from = join(staging, f.name);
      if (lstatOrNull(from) === null) continue; // moved before the interruption
      makeFolders(dirname(join(dir, f.name)));
      renameSync(from, join(dir, f.name));
      step('journal-moves');
    }
    renameSync(join(staging, MANIFEST), join(dir, MANIFEST));
  }
  for (const f of journal.folders) pruneEmpty(dir, f);
  rmSync(staging, { recursive: true, force: true });
  unlinkSync(join(dir, JOURNAL));
}

/** Remove staging folders of runs that died (killed) in `where` (a batch does this in its folder when it ends). */
export function removeStaleStaging(where: string): void {
  let entries: string[];
  try {
    entries = readdirSync(where);
  } catch {
    return;
  }
  for (const n of entries) {
    // an intent record cut short before its rename, as earlier builds of sill left it beside the
    // results (now its temporary is inside the staging folder and goes with it)
    const tmp = /^\.sill-journal\.json\.(\d+)\.tmp$/.exec(n);
    if (!(n.startsWith(STAGING_PREFIX) && isStale(n)) && !(tmp && isStale(`${STAGING_PREFIX}${HOST}-${tmp[1]}-0`))) continue;
    try { rmSync(join(where, n), { recursive: true, force: true }); } catch { /* not ours to remove (permissions): leave it */ }
  }
}

type Mode = 'create' | 'exchange' | 'journal';

/** Fault injection for the crash tests (tests/cli/crash.test.ts): SILL_CRASH_AT=<step> kills this process with SIGKILL at that step of a commit. */
function step(name: string): void {
  assertSupervised();
  if (process.env.SILL_CRASH_AT === name) process.kill(process.pid, 'SIGKILL');
}

/** Folders with a staging folder open, for the SIGINT/SIGTERM handler. */
const active = new Set<OutputFolder>();

function onSignal(sig: NodeJS.Signals): void {
  const names: string[] = [];
  for (const f of active) {
    if (f.aborts()) names.push(f.given);
    f.abort();
  }
  process.stderr.write(`sill: stopped by ${sig}; ${names.length ? `${names.join(', ')} left as ${names.length === 1 ? 'it was' : 'they were'}` : 'the results were already written'}\n`);
  process.exit(sig === 'SIGINT' ? 130 : 143);
}

function listen(on: boolean): void {
  for (const sig of ['SIGINT', 'SIGTERM'] as const) {
    if (on && !process.listeners(sig).includes(onSignal)) process.on(sig, onSignal);
    if (!on) process.off(sig, onSignal);
  }
}

export class OutputFolder {
  /** The folder as the user gave it (for messages). */
  readonly given: string;
  /** Its absolute path, symbolic links resolved. */
  readonly dir: string;
  private readonly plan: OutputPlan;
  private readonly matches: (name: string) => boolean;
  private mode: Mode;
  private readonly previous: Manifest | null;
  /** Files and folders in DIR that sill did not write (relative names; folders as whole). */
  private readonly foreign: string[];
  /** Foreign files a result replaces (--force). */
  private readonly replaced = new Set<string>();
  private staging: string | null = null;
  private createdFrom: string | undefined;
  private readonly names: string[] = [];
  private done = false;
  private scratchDir: string | null = null;

  /**
   * Check the output folder before any work: a folder or creatable, writable; files sill did not
   * write only with --force (a manifest tells which are sill's); no input where a result goes.
   * Completes an interrupted journal commit and removes stale staging folders of dead runs.
   */
  constructor(dir: string, plan: OutputPlan) {
    this.given = dir;
    this.plan = plan;
    this.matches = planMatcher(plan.names);
    const { dir: abs, exists } = checkFolder(dir);
    this.dir = abs;
    try {
      if (!exists) {
        this.mode = 'create';
        this.previous = null;
        this.foreign = [];
        if (lstatOrNull(dirname(abs))) this.cleanStale(dirname(abs));
        return;
      }
      const journal = readJson<Journal>(join(abs, JOURNAL));
      if (journal) applyJournal(abs, journal);
      this.cleanStale(abs);
      this.cleanStale(dirname(abs));
      let previous: Manifest | null = null;
      try {
        const m = readJson<unknown>(join(abs, MANIFEST));
        if (m !== null && !validManifest(m)) throw new Error('bad');
        previous = m as Manifest | null;
      } catch (e) {
        if (isFsError(e)) throw e;
        if (!plan.force) throw new InputError(`${join(dir, MANIFEST)} is damaged, so sill cannot tell its own files from others; delete it, or add --force to write beside everything in ${dir}`);
      }
      this.previous = previous;
      this.foreign = this.findForeign();
      if (!previous && this.foreign.length > 0 && !plan.force) {
        const some = this.foreign.slice(0, 3).join(', ') + (this.foreign.length > 3 ? ', …' : '');
        throw new InputError(`output folder ${dir} holds files sill did not write (${some}); choose a new or empty folder, or add --force to write beside them (they are kept)`);
      }
      for (const f of this.foreign) {
        if (!this.matches(f)) continue;
        if (!plan.force) throw new InputError(`${join(dir, f)} was not written by sill and this run would replace it; move it away, or add --force to replace it`);
        this.replaced.add(f);
      }
      this.mode = this.chooseMode();
      if (this.mode === 'exchange') this.probe(dirname(abs));
    } catch (e) {
      if (e instanceof InputError || e instanceof OutputError) throw e;
      if (isFsError(e)) throw new OutputError(`cannot use output folder ${dir}: ${plainReason(e)}`);
      throw e;
    }
    this.checkInputs();
  }

  /** Top-level entries of DIR that sill did not write, and the entries of sill's folders it did not list. */
  private findForeign(): string[] {
    const listed = new Set((this.previous?.files ?? []).map((f) => f.name));
    const folders = new Set(this.previous?.folders ?? []);
    const out: string[] = [];
    for (const e of readdirSync(this.dir, { withFileTypes: true })) {
      const n = e.name;
      if (n === MANIFEST || n === JOURNAL || n.startsWith(STAGING_PREFIX) || (n.startsWith(JOURNAL) && n.endsWith('.tmp'))) continue;
      if (listed.has(n)) continue;
      if (e.isDirectory() && folders.has(n)) {
        const inner: string[] = [];
        walkFiles(this.dir, n, inner);
        out.push(...inner.filter((f) => !listed.has(f)));
      } else {
        out.push(n);
      }
    }
    return out.sort();
  }

  private chooseMode(): Mode {
    const parent = dirname(this.dir);
    if (parent === this.dir || exchangeWay() === null) return 'journal';
    // exchanging the working folder would leave the caller's shell in the removed old tree
    const cwd = (() => { try { return realpathSync(process.cwd()); } catch { return process.cwd(); } })();
    if (cwd === this.dir || cwd.startsWith(this.dir + sep)) return 'journal';
    try {
      if (statSync(parent).dev !== statSync(this.dir).dev) return 'journal'; // DIR is a mount point
      accessSync(parent, fsc.W_OK);
    } catch {
      return 'journal';
    }
    return 'exchange';
  }

  /** Fail now, before the work, if no staging folder can be made in `where`. */
  private probe(where: string): void {
    const p = join(where, stagingName());
    try {
      mkdirSync(p);
    } catch (e) {
      throw new OutputError(`cannot write to the folder that holds ${this.given}: ${plainReason(e)}`);
    }
    rmdirSync(p);
  }

  private cleanStale(where: string): void {
    removeStaleStaging(where);
  }

  /** An input inside DIR that a result would overwrite, or that this run would remove, is refused. */
  private checkInputs(): void {
    const listed = new Set((this.previous?.files ?? []).map((f) => f.name));
    for (const input of this.plan.inputs ?? []) {
      if (input === undefined) continue;
      let real: string;
      try {
        real = realpathSync(input);
      } catch {
        continue; // the loader says what is wrong with it
      }
      const rel = relative(this.dir, real);
      if (!rel || rel.startsWith('..') || isAbsolute(rel)) continue;
      const name = rel.split(sep).join('/');
      if (this.matches(name)) {
        throw new InputError(`input ${input} is inside the output folder ${this.given}, where this run writes its ${name}; copy the input elsewhere or write to another folder`);
      }
      if (listed.has(name)) {
        throw new InputError(`input ${input} is a result of the earlier run in ${this.given}, which this run removes; copy the input elsewhere or write to another folder`);
      }
    }
  }

  /** The staging folder, made on first use (with the signal handler that removes it). */
  private ensureStaging(): string {
    if (this.staging) return this.staging;
    if (this.done) throw new Error('output folder already committed');
    const where = this.mode === 'journal' ? this.dir : dirname(this.dir);
    if (this.mode === 'create') this.createdFrom = makeFolders(where);
    const s = join(where, stagingName());
    // the handler first: a SIGINT/SIGTERM from now on waits for it (it runs after this synchronous
    // step, when the staging folder is known) instead of ending the process with the folder made
    active.add(this);
    listen(true);
    mkdirSync(s);
    this.staging = s;
    return s;
  }

  /** Path inside the staging folder for a file that will be named `name` (subfolders allowed). */
  path(name: string): string {
    if (!safeName(name) || name === MANIFEST || name.startsWith(STAGING_PREFIX)) throw new Error(`bad output name ${name}`);
    if (!this.matches(name)) throw new Error(`output name ${name} is not in the plan of ${this.plan.command}: add it to the names the command declares`);
    const p = join(this.ensureStaging(), name);
    makeFolders(dirname(p));
    this.names.push(name);
    return p;
  }

  /**
   * A folder for the run's own temporary files inside the staging folder (a tiled run's stage
   * files and labels): not part of the result — removed before the commit, and with the staging
   * folder when the run fails or is killed.
   */
  scratch(): string {
    const p = join(this.ensureStaging(), SCRATCH);
    mkdirSync(p, { recursive: true });
    this.scratchDir = p;
    return p;
  }

  /** Let a SIGINT/SIGTERM that came in act now (writers call this between files; their steps are synchronous). */
  async checkpoint(): Promise<void> {
    assertSupervised();
    await new Promise((r) => setImmediate(r));
    await new Promise((r) => setImmediate(r));
  }

  write(name: string, data: string | Uint8Array): void {
    writeFileSync(this.path(name), data);
  }

  /** Put the complete set in place (see the top of this file). Returns the final paths. */
  async commit(): Promise<string[]> {
    const staging = this.ensureStaging();
    if (this.scratchDir) { rmSync(this.scratchDir, { recursive: true, force: true }); this.scratchDir = null; }
    const names = [...new Set(this.names)];
    try {
      const files = names.map((name) => ({ name, size: lstatSync(join(staging, name)).size }));
      const folders = [...new Set(names.filter((n) => n.includes('/')).map((n) => n.split('/')[0]))];
      step('staged');
      const manifest: Manifest = {
        schema: 'sill/manifest@1', run: randomBytes(8).toString('hex'), command: this.plan.command, sillVersion: this.plan.version,
        time: new Date().toISOString(), files, folders,
      };
      writeWhole(join(staging, MANIFEST), manifestText(manifest), staging);
      step('manifest');
      if (this.mode === 'create') {
        renameSync(staging, this.dir);
      } else if (this.mode === 'exchange') {
        this.commitByExchange(staging, manifest);
      } else {
        this.commitByJournal(staging);
      }
      this.staging = null;
      this.done = true;
    } catch (e) {
      throw this.fail(e);
    }
    // a SIGINT/SIGTERM that came in while the commit ran is handled now, with the result in place: two
    // turns of the event loop, so that its poll phase (where signals are read) runs before the handler goes
    await new Promise((r) => setImmediate(r));
    await new Promise((r) => setImmediate(r));
    this.close();
    return names.map((n) => join(this.dir, n));
  }

  private commitByExchange(staging: string, manifest: Manifest): void {
    const carried: string[] = [];
    // hard-link one file into the new folder; one deleted since, or clashing with a result written
    // since, is left out (a clashing one then stays in the old tree, which is kept: removeOldTree)
    const carry = (g: string): void => {
      try {
        makeFolders(dirname(join(staging, g)));
        linkSync(join(this.dir, g), join(staging, g));
        carried.push(g);
      } catch (e) {
        const code = (e as NodeJS.ErrnoException).code;
        if (code !== 'ENOENT' && code !== 'EEXIST') throw e;
      }
    };
    let ok = true;
    try {
      // listed again now: the user may have added or removed files while the run worked
      for (const f of this.findForeign()) {
        if (this.replaced.has(f)) continue;
        const st = lstatOrNull(join(this.dir, f));
        if (st?.isDirectory()) {
          const inner: string[] = [];
          walkFiles(this.dir, f, inner);
          makeFolders(join(staging, f));
          for (const g of inner) carry(g);
        } else if (st) {
          carry(f);
        }
      }
      // the new folder takes the old one's permissions and owner
      const st = statSync(this.dir);
      chmodSync(staging, st.mode & 0o7777);
      try { chownSync(staging, st.uid, st.gid); } catch { /* not permitted: keep ours */ }
    } catch (e) {
      if (!isFsError(e)) throw e;
      ok = false; // hard links not possible here (another file system inside DIR, a file system without them)
    }
    if (ok) {
      step('carried');
      const err = exchangeFolders(staging, this.dir);
      const swapped = err === null || readJson<Manifest>(join(this.dir, MANIFEST))?.run === manifest.run;
      if (swapped) {
        step('exchanged');
        this.removeOldTree(staging, new Set(carried));
        return;
      }
    }
    // fall back to the journal: the staging folder moves inside DIR without the carried links
    for (const g of carried) unlinkSync(join(staging, g));
    const inside = join(this.dir, stagingName());
    renameSync(staging, inside);
    this.staging = inside;
    this.mode = 'journal';
    this.commitByJournal(inside);
  }

  /** After the exchange `old` holds the previous tree: remove sill's files and the carried links; anything else goes back. */
  private removeOldTree(old: string, carried: Set<string>): void {
    const listed = new Set((this.previous?.files ?? []).map((f) => f.name));
    const files: string[] = [];
    walkFiles(old, '', files);
    const kept: string[] = [];
    for (const f of files) {
      if (f === MANIFEST || f === JOURNAL || listed.has(f) || carried.has(f) || this.replaced.has(f)) {
        unlinkSync(join(old, f));
        step('old-tree');
      } else if (lstatOrNull(join(this.dir, f)) === null) {
        // appeared in DIR while the run was committing: it is not sill's, so it goes back
        makeFolders(dirname(join(this.dir, f)));
        renameSync(join(old, f), join(this.dir, f));
      } else {
        kept.push(f);
      }
    }
    if (kept.length === 0) {
      rmSync(old, { recursive: true, force: true });
      return;
    }
    const keep = `${this.dir}.sill-kept-${Date.now()}`;
    renameSync(old, keep);
    process.stderr.write(`sill: warning: ${kept.length} file(s) written to ${this.given} during the commit clash with results; they are kept in ${keep}\n`);
  }

  private commitByJournal(staging: string): void {
    const now = new Set(this.names);
    const remove = (this.previous?.files ?? []).map((f) => f.name).filter((n) => !now.has(n));
    const journal: Journal = { schema: 'sill/journal@1', staging: relative(this.dir, staging), remove, folders: this.previous?.folders ?? [] };
    // its temporary is written inside the staging folder (which is inside DIR here): a kill before the
    // rename leaves DIR as it was plus that one staging folder, never a stray temporary beside the results
    writeWhole(join(this.dir, JOURNAL), JSON.stringify(journal) + '\n', staging, 'journal-temp');
    step('journal');
    applyJournal(this.dir, journal);
  }

  /** True when abort() would leave DIR as it was (nothing committed, no journal commit under way). */
  aborts(): boolean {
    return !this.done && !this.journalPending();
  }

  private journalPending(): boolean {
    return this.mode === 'journal' && this.staging !== null && lstatOrNull(join(this.dir, JOURNAL)) !== null;
  }

  /** Drop everything staged (on failure). Files in DIR are not touched; a journal commit under way is left for the next run to complete. */
  abort(): void {
    if (this.staging && this.aborts()) {
      rmSync(this.staging, { recursive: true, force: true });
      this.staging = null;
    }
    if (this.createdFrom && lstatOrNull(this.dir) === null) {
      pruneEmpty(dirname(this.createdFrom), relative(dirname(this.createdFrom), dirname(this.dir)));
      this.createdFrom = undefined;
    }
    this.close();
  }

  /** abort(), and the error as the user should see it: file-system failures in plain words, naming DIR as given, never the staging folder. */
  fail(e: unknown): Error {
    const staged = this.staging;
    const pending = this.journalPending();
    this.abort();
    if (staged && e instanceof Error && e.message.includes(staged)) e.message = e.message.split(staged).join(this.given.replace(/[\\/]+$/, ''));
    if (e instanceof InputError || e instanceof OutputError) return e;
    if (isFsError(e)) {
      const after = this.done ? '' : pending ? '; the next run into it completes the commit' : '; nothing in it was changed';
      return new OutputError(`cannot write the output folder ${this.given}: ${plainReason(e)}${after}`);
    }
    return e as Error;
  }

  private close(): void {
    active.delete(this);
    if (active.size === 0) listen(false);
  }
}
