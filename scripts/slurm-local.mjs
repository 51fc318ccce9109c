#!/usr/bin/env node
/**
 * A single-node Slurm on this machine, for the cluster tests (tests/cluster) and for trying
 * `sill batch --scheduler slurm` by hand:
 *
 *   node scripts/slurm-local.mjs start    # install if missing, write the configuration, start, wait until the node is idle
 *   node scripts/slurm-local.mjs status   # is it up? (exit 0 when the node answers)
 *   node scripts/slurm-local.mjs stop     # stop the daemons this script started, by the PIDs in their pid files
 *
 * Everything lives in one folder (SILL_SLURM_DIR, default <tmpdir>/sill-slurm): slurm.conf,
 * cgroup.conf, state, spool, logs and pid files. Clients find the configuration through the
 * environment variable SLURM_CONF=<folder>/slurm.conf (`start` prints it; `env()` below returns it).
 * The daemons bind to 127.0.0.1. Needs root (Debian 12 without systemd: the daemons are started as
 * plain processes; munged as user munge). The packages come through scripts/prerequisites.mjs
 * (group `slurm`). A munged that was already running is used and left running.
 *
 * Configuration facts this relies on (Slurm 22.05 on Debian 12; see docs/batch.md):
 * SelectTypeParameters=CR_Core (otherwise the node offers no memory and array tasks run one at a
 * time), proctrack/linuxproc and task/none (no cgroups), no accounting, and
 * DependencyParameters=kill_invalid_depend (otherwise a job whose afterok dependency failed stays
 * pending for ever). JobCompType=jobcomp/filetxt keeps one line per finished job, since sacct needs
 * slurmdbd.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readFileSync, writeFileSync, rmSync } from 'node:fs';
import { cpus, totalmem, tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { GROUPS, installer } from './prerequisites.mjs';

export const folder = () => process.env.SILL_SLURM_DIR || join(tmpdir(), 'sill-slurm');
const NODE = 'sill-node';
const PARTITION = 'sill';
const MUNGE_PID = '/run/munge/munged.pid';
const MUNGE_SOCKET = '/run/munge/munge.socket.2';

/** The environment a client (sbatch, squeue, scontrol) needs to reach this Slurm. */
export function env() {
  return { ...process.env, SLURM_CONF: join(folder(), 'slurm.conf') };
}

const say = (line) => process.stderr.write(`slurm-local: ${line}\n`);

function run(cmd, args, opts = {}) {
  return spawnSync(cmd, args, { encoding: 'utf8', env: env(), timeout: 20000, ...opts });
}

function pidOf(file) {
  try {
    const pid = Number(readFileSync(file, 'utf8').trim());
    return Number.isSafeInteger(pid) && pid > 0 ? pid : null;
  } catch {
    return null;
  }
}

function alive(pid) {
  if (pid === null) return false;
  try {
    process.kill(pid, 0);
    return true;
  } catch (e) {
    return e.code === 'EPERM';
  }
}

const sleep = (ms) => new Promise((r) => setTimeout(r, ms));

/** The node's state as scontrol reports it (e.g. IDLE, MIXED, DOWN*), or null when the controller does not answer. */
export function nodeState() {
  const r = run('scontrol', ['show', 'node', NODE], { timeout: 5000 });
  if (r.status !== 0) return null;
  const m = /State=(\S+)/.exec(r.stdout);
  return m ? m[1] : null;
}

function install() {
  const group = GROUPS.find((g) => g.id === 'slurm');
  if (group.missing() === null) return;
  const sudo = process.env.SILL_NO_INSTALL === '1' ? null : installer();
  if (sudo === null) throw new Error(`${group.missing()}; install them: apt-get install -y ${group.packages.join(' ')}`);
  say(`installing ${group.packages.join(' ')} with apt-get`);
  const argv = (a) => (sudo.length ? [sudo[0], [...sudo.slice(1), ...a]] : [a[0], a.slice(1)]);
  const e = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
  for (const a of [['apt-get', 'update'], ['apt-get', 'install', '-y', ...group.packages]]) {
    const [c, rest] = argv(a);
    const r = spawnSync(c, rest, { encoding: 'utf8', env: e });
    if (r.status !== 0) throw new Error(`${a.join(' ')} failed: ${(r.stderr || r.stdout).trim().split('\n').slice(-2).join(' | ')}`);
  }
  if (group.missing() !== null) throw new Error(`still missing after the install: ${group.missing()}`);
}

function writeConfig(dir) {
  for (const d of ['state', 'spool', 'log']) mkdirSync(join(dir, d), { recursive: true });
  const cores = cpus().length;
  // memory is not a consumable resource with CR_Core; RealMemory only bounds what a job may ask for
  const memMb = Math.floor((totalmem() / 2 ** 20) * 0.9);
  const port = Number(process.env.SILL_SLURM_PORT || 6817);
  const conf = [
    '# single-node Slurm for sill\'s cluster tests (scripts/slurm-local.mjs); not for production',
    'ClusterName=sill-local',
    'SlurmctldHost=localhost(127.0.0.1)',
    `SlurmctldPort=${port}`,
    `SlurmdPort=${port + 1}`,
    'SlurmUser=root',
    'SlurmdUser=root',
    'AuthType=auth/munge',
    'CredType=cred/munge',
    `StateSaveLocation=${join(dir, 'state')}`,
    `SlurmdSpoolDir=${join(dir, 'spool')}`,
    `SlurmctldPidFile=${join(dir, 'slurmctld.pid')}`,
    `SlurmdPidFile=${join(dir, 'slurmd.pid')}`,
    `SlurmctldLogFile=${join(dir, 'log', 'slurmctld.log')}`,
    `SlurmdLogFile=${join(dir, 'log', 'slurmd.log')}`,
    'ProctrackType=proctrack/linuxproc',
    'TaskPlugin=task/none',
    'JobAcctGatherType=jobacct_gather/none',
    'AccountingStorageType=accounting_storage/none',
    'JobCompType=jobcomp/filetxt',
    `JobCompLoc=${join(dir, 'log', 'jobcomp.txt')}`,
    'DependencyParameters=kill_invalid_depend',
    'SchedulerType=sched/backfill',
    'SelectType=select/cons_tres',
    'SelectTypeParameters=CR_Core',
    'MpiDefault=none',
    'SwitchType=switch/none',
    'ReturnToService=2',
    'MinJobAge=300',
    'SchedulerParameters=sched_interval=2',
    'SlurmctldTimeout=30',
    'SlurmdTimeout=30',
    `NodeName=${NODE} NodeHostname=localhost NodeAddr=127.0.0.1 CPUs=${cores} RealMemory=${memMb} State=UNKNOWN`,
    `PartitionName=${PARTITION} Nodes=${NODE} Default=YES MaxTime=INFINITE State=UP`,
    '',
  ].join('\n');
  writeFileSync(join(dir, 'slurm.conf'), conf);
  // no cgroups (proctrack/linuxproc, task/none): the cgroup plugin is never needed
  writeFileSync(join(dir, 'cgroup.conf'), 'CgroupPlugin=autodetect\nIgnoreSystemd=yes\nConstrainCores=no\nConstrainRAMSpace=no\n');
}

function startMunge(dir) {
  if (existsSync(MUNGE_SOCKET) && alive(pidOf(MUNGE_PID))) return false;
  const r1 = spawnSync('install', ['-d', '-o', 'munge', '-g', 'munge', '-m', '0755', '/run/munge'], { encoding: 'utf8' });
  if (r1.status !== 0) throw new Error(`cannot make /run/munge: ${r1.stderr.trim()}`);
  const r2 = spawnSync('runuser', ['-u', 'munge', '--', '/usr/sbin/munged'], { encoding: 'utf8' });
  if (r2.status !== 0) throw new Error(`munged did not start: ${(r2.stderr || r2.stdout).trim()}`);
  writeFileSync(join(dir, 'munged.started'), `${MUNGE_PID}\n`);
  return true;
}

async function start() {
  if (process.getuid?.() !== 0) throw new Error('the local Slurm needs root (its daemons run as root here)');
  install();
  const dir = folder();
  if (nodeStateSafe() !== null && alive(pidOf(join(dir, 'slurmctld.pid')))) {
    say(`already running (SLURM_CONF=${join(dir, 'slurm.conf')})`);
    return;
  }
  stopDaemons(dir, false);
  rmSync(dir, { recursive: true, force: true });
  mkdirSync(dir, { recursive: true });
  writeConfig(dir);
  startMunge(dir);
  const conf = join(dir, 'slurm.conf');
  // -i: ignore any state a previous controller saved (there is none: the folder is new)
  for (const [daemon, args] of [['/usr/sbin/slurmctld', ['-f', conf, '-i']], ['/usr/sbin/slurmd', ['-f', conf, '-N', NODE]]]) {
    const r = spawnSync(daemon, args, { encoding: 'utf8', env: env() });
    if (r.status !== 0) throw new Error(`${daemon} did not start: ${(r.stderr || r.stdout).trim().split('\n').slice(-2).join(' | ')}; see ${join(dir, 'log')}`);
  }
  // wait until the node is idle (the controller needs a few seconds to register it)
  const t0 = Date.now();
  let state = null;
  while (Date.now() - t0 < 60000) {
    state = nodeStateSafe();
    if (state !== null && /^IDLE/.test(state)) break;
    if (state !== null && /DOWN|DRAIN/.test(state)) run('scontrol', ['update', `NodeName=${NODE}`, 'State=RESUME']);
    await sleep(300);
  }
  if (state === null || !/^IDLE/.test(state)) throw new Error(`the node did not become idle within 60 s (state ${state ?? 'unknown'}); see ${join(dir, 'log')}`);
  say(`up in ${((Date.now() - t0) / 1000).toFixed(1)} s; clients need SLURM_CONF=${conf}`);
}

function nodeStateSafe() {
  try {
    return existsSync(join(folder(), 'slurm.conf')) ? nodeState() : null;
  } catch {
    return null;
  }
}

/** Stop slurmd, slurmctld and (when this script started it) munged, each by its pid file; wait until each is gone. */
function stopDaemons(dir, loud) {
  const files = [join(dir, 'slurmd.pid'), join(dir, 'slurmctld.pid')];
  if (existsSync(join(dir, 'munged.started'))) files.push(MUNGE_PID);
  for (const f of files) {
    const pid = pidOf(f);
    if (!alive(pid)) continue;
    try { process.kill(pid, 'SIGTERM'); } catch { /* gone meanwhile */ }
    const t0 = Date.now();
    while (alive(pid) && Date.now() - t0 < 10000) spawnSync('sleep', ['0.1']);
    if (alive(pid)) {
      try { process.kill(pid, 'SIGKILL'); } catch { /* gone */ }
    }
    if (loud) say(`stopped ${f.replace(/.*\//, '').replace('.pid', '')} (pid ${pid})`);
  }
}

function stop() {
  const dir = folder();
  if (!existsSync(dir)) {
    say('not running');
    return;
  }
  stopDaemons(dir, true);
  rmSync(join(dir, 'munged.started'), { force: true });
}

function status() {
  const s = nodeStateSafe();
  if (s === null) {
    say('not running');
    return 1;
  }
  say(`node ${NODE}: ${s}; SLURM_CONF=${join(folder(), 'slurm.conf')}`);
  return 0;
}

export { start, stop, status, NODE, PARTITION };

if (process.argv[1] && fileURLToPath(import.meta.url) === process.argv[1]) {
  const what = process.argv[2];
  try {
    if (what === 'start') await start();
    else if (what === 'stop') stop();
    else if (what === 'status') process.exitCode = status();
    else {
      say('usage: node scripts/slurm-local.mjs start|stop|status');
      process.exitCode = 2;
    }
  } catch (e) {
    say(e.message);
    process.exitCode = 1;
  }
}
