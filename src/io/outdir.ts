/**
 * Output folders written all-or-nothing: files are staged in a hidden folder beside their
 * final place and moved in only when every one of them was written.
 */
import { mkdirSync, renameSync, rmSync, rmdirSync, writeFileSync, existsSync, statSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { InputError } from '../errors.js';

export class OutputFolder {
  readonly dir: string;
  readonly staging: string;
  private readonly names: string[] = [];
  private readonly created: boolean;

  constructor(dir: string) {
    this.dir = resolve(dir);
    if (existsSync(this.dir) && !statSync(this.dir).isDirectory()) {
      throw new InputError(`output path ${dir} exists and is not a folder; choose another -o/--out`);
    }
    this.created = !existsSync(this.dir);
    try {
      mkdirSync(this.dir, { recursive: true });
    } catch (e) {
      throw new InputError(`cannot create output folder ${dir}: ${(e as Error).message}`);
    }
    this.staging = join(this.dir, `.sill-staging-${process.pid}-${Date.now()}`);
    mkdirSync(this.staging, { recursive: true });
  }

  /** Path inside the staging folder for a file that will be named `name` (subfolders allowed). */
  path(name: string): string {
    this.names.push(name);
    const p = join(this.staging, name);
    mkdirSync(join(p, '..'), { recursive: true });
    return p;
  }

  write(name: string, text: string | Uint8Array): void {
    writeFileSync(this.path(name), text);
  }

  /** Move every staged file into the output folder. */
  commit(): string[] {
    for (const name of this.names) {
      const target = join(this.dir, name);
      mkdirSync(join(target, '..'), { recursive: true });
      renameSync(join(this.staging, name), target);
    }
    rmSync(this.staging, { recursive: true, force: true });
    return this.names.map((n) => join(this.dir, n));
  }

  /** Drop everything staged (on failure). */
  abort(): void {
    rmSync(this.staging, { recursive: true, force: true });
    if (this.created) {
      try { rmdirSync(this.dir); } catch { /* not empty: leave what the user had */ }
    }
  }
}
