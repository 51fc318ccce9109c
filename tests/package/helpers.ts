/**
 * What the package tests share: the code blocks of docs/library.md by section, a folder where
 * `import 'sill'` resolves (to this checkout's build, or to a tarball installed as a user would),
 * and running a block there as its own program.
 */
import { spawnSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, symlinkSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { PYTHON } from '../prereq.js';

export const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');

export interface CodeBlock {
  lang: string;
  code: string;
  /** 1-based line of the opening fence in the page. */
  line: number;
}

export interface DocSection {
  title: string;
  blocks: CodeBlock[];
}

/** The fenced code blocks of a Markdown page, grouped by its `## ` sections (blocks above the first go under the page title). */
export function codeSections(markdown: string): DocSection[] {
  const lines = markdown.split('\n');
  const sections: DocSection[] = [{ title: 'introduction', blocks: [] }];
  for (let i = 0; i < lines.length; i++) {
    const l = lines[i];
    if (l.startsWith('## ')) { sections.push({ title: l.slice(3).trim(), blocks: [] }); continue; }
    const open = /^```(\S*)\s*$/.exec(l);
    if (!open) continue;
    const start = i;
    const body: string[] = [];
    for (i++; i < lines.length && !/^```\s*$/.test(lines[i]); i++) body.push(lines[i]);
    if (i >= lines.length) throw new Error(`the code block opened at line ${start + 1} is never closed`);
    sections[sections.length - 1].blocks.push({ lang: open[1], code: body.join('\n') + '\n', line: start + 1 });
  }
  return sections.filter((s) => s.blocks.length > 0);
}

/** The sections of docs/library.md. */
export function librarySections(): DocSection[] {
  return codeSections(readFileSync(join(root, 'docs', 'library.md'), 'utf8'));
}

/** A new empty folder in which `import 'sill'` resolves to this checkout (its package.json exports map and dist/). */
export function folderWithBuild(): string {
  const dir = mkdtempSync(join(tmpdir(), 'sill-docs-'));
  mkdirSync(join(dir, 'node_modules'));
  symlinkSync(root, join(dir, 'node_modules', 'sill'), 'dir');
  writeFileSync(join(dir, 'package.json'), JSON.stringify({ name: 'docs-examples', private: true, type: 'module' }));
  return dir;
}

export interface Ran {
  status: number | null;
  stdout: string;
  stderr: string;
}

/** Run one code block in `dir` as its own program (`js`: Node, ES module; `python`: the prerequisites' Python). */
export function runBlock(dir: string, block: CodeBlock, name: string): Ran {
  let cmd: string, file: string;
  if (block.lang === 'js') { cmd = process.execPath; file = `${name}.mjs`; }
  else if (block.lang === 'python') { cmd = PYTHON; file = `${name}.py`; }
  else throw new Error(`docs/library.md line ${block.line}: a \`\`\`${block.lang} block cannot be run; examples are js or python`);
  writeFileSync(join(dir, file), block.code);
  const r = spawnSync(cmd, [file], { cwd: dir, encoding: 'utf8', timeout: 60_000, env: { ...process.env, NODE_OPTIONS: '' } });
  return { status: r.status, stdout: r.stdout, stderr: r.stderr + (r.error ? String(r.error) : '') };
}
