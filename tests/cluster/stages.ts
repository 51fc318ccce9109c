/** A run folder of three stages for the engine tests: an array with one failing task, then one stage after `any`, one after `ok`. */
import { join } from 'node:path';
import { RunFolder, type StageSpec } from '../../src/cluster/run-folder.js';

export function threeStages(dir: string, good: string, bad: string): RunFolder {
  const run = new RunFolder(join(dir, 'run'));
  const task = (input: string, out: string) => ({ label: input, argv: ['survey', input, '-o', join(dir, out), '--quiet'], output: join(dir, out), memoryMb: 256 });
  const stages: StageSpec[] = [
    { schema: 'sill/stage@1', name: 'first', after: [], cpus: 1, tasks: [task(good, 'a'), task(bad, 'b')] },
    { schema: 'sill/stage@1', name: 'anyway', after: [{ stage: 'first', when: 'any' }], cpus: 1, tasks: [task(good, 'c')] },
    { schema: 'sill/stage@1', name: 'needs-all', after: [{ stage: 'first', when: 'ok' }], cpus: 1, tasks: [task(good, 'd')] },
  ];
  run.create({ schema: 'sill/run@1', stages: stages.map((s) => s.name), extra: null }, stages);
  return run;
}
