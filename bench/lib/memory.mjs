/** Spawn the memory child for one job of a case module and return its report. */
import { spawn } from 'node:child_process';
import { join } from 'node:path';
import { BENCH_DIR } from './util.mjs';

export function runMemoryChild(ctx, moduleFile, job) {
  const args = [
    '--expose-gc', join(BENCH_DIR, 'lib', 'memory-child.mjs'),
    '--module', moduleFile, '--job', job,
    '--size', String(ctx.size), '--seed', String(ctx.seed), '--quantum', String(ctx.quantum),
    ...(ctx.float64 ? ['--float64'] : []),
  ];
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, args, { stdio: ['ignore', 'pipe', 'inherit'] });
    let out = '';
    child.stdout.on('data', (d) => { out += d; });
    child.on('error', reject);
    child.on('close', (code) => {
      if (code !== 0) { reject(new Error(`memory child for ${job} exited with ${code}`)); return; }
      const last = out.trim().split('\n').pop();
      try { resolve(JSON.parse(last)); } catch { reject(new Error(`memory child for ${job} printed no report: ${out}`)); }
    });
  });
}
