#!/usr/bin/env node
/** The `sill` command line: a thin layer over the library. Exit 0 ok, 1 runtime failure, 2 bad usage or input. */
import { Command, CommanderError } from 'commander';
import { InputError } from '../errors.js';
import { SILL_VERSION } from '../report/common.js';
import { registerSurvey } from './survey.js';
import { registerDemo } from './demo.js';
import { registerBarriers } from './barriers.js';
import { registerPonds } from './ponds.js';
import { registerRunoff } from './runoff.js';

export function buildProgram(): Command {
  const program = new Command();
  program
    .name('sill')
    .description('Morse-theoretic analysis of terrain and energy landscapes: pits, passes, peaks, merge trees and persistence')
    .version(SILL_VERSION)
    .exitOverride()
    .configureOutput({ writeErr: (s) => process.stderr.write(s) });
  registerSurvey(program);
  registerBarriers(program);
  registerPonds(program);
  registerRunoff(program);
  registerDemo(program);
  for (const c of program.commands) c.exitOverride();
  return program;
}

export async function main(argv: string[]): Promise<number> {
  const program = buildProgram();
  try {
    await program.parseAsync(argv);
    return 0;
  } catch (e) {
    if (e instanceof CommanderError) {
      if (e.code === 'commander.helpDisplayed' || e.code === 'commander.version' || e.code === 'commander.help') return 0;
      return 2; // commander already printed its one-line message
    }
    if (e instanceof InputError) {
      process.stderr.write(`sill: ${e.message}\n`);
      return 2;
    }
    if (e instanceof RangeError && /Array buffer allocation failed|Invalid typed array length/.test(e.message)) {
      process.stderr.write(`sill: not enough memory for this input (${e.message}); use a smaller window or tile\n`);
      return 1;
    }
    process.stderr.write(`sill: ${(e as Error).message ?? e}\n`);
    if (process.env.SILL_DEBUG) process.stderr.write(`${(e as Error).stack}\n`);
    return 1;
  }
}

main(process.argv).then((code) => {
  process.exitCode = code;
});
