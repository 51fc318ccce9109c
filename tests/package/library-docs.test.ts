/**
 * docs/library.md cannot drift: every code block of the page is run, section by section in an
 * empty folder, against the built package (`import 'sill'` through package.json's exports map).
 * The examples assert their results against outside sources named beside each check (a
 * paraboloid's volume, a double well's stationary points, sin x · sin y on a torus).
 */
import { describe, it, expect, afterAll } from 'vitest';
import { existsSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { runs, skipNote } from '../prereq.js';
import { librarySections, folderWithBuild, runBlock, root } from './helpers.js';

const sections = librarySections();

describe('docs/library.md', () => {
  it('holds the worked examples the page promises', () => {
    expect(existsSync(join(root, 'dist', 'index.js')), 'dist/index.js is missing: run npm run build first').toBe(true);
    expect(sections.map((s) => s.title)).toEqual([
      'Depressions of a GeoTIFF', 'Routing runoff', 'Barriers of an energy surface saved by NumPy',
      'An array from another library, and persistence pairs', 'Errors',
    ]);
    for (const s of sections) for (const b of s.blocks) expect(['js', 'python'], `line ${b.line}`).toContain(b.lang);
    // every example imports the package by its name, as a user's program would
    for (const s of sections) for (const b of s.blocks) if (b.lang === 'js') expect(b.code, `line ${b.line}`).toMatch(/from 'sill'/);
  });

  // The sections on the GeoTIFF and on runoff share the DEM the first one writes: one folder for both.
  const shared = new Set(['Depressions of a GeoTIFF', 'Routing runoff']);
  let sharedDir: string | null = null;
  afterAll(() => { if (sharedDir) rmSync(sharedDir, { recursive: true, force: true }); });
  for (const s of sections) {
    const needsNumpy = s.blocks.some((b) => b.lang === 'python');
    const run = needsNumpy && !runs('numpy') ? it.skip : it;
    run(`${s.title}: every block runs and its checks pass${needsNumpy ? skipNote('numpy') : ''}`, () => {
      const dir = shared.has(s.title) ? (sharedDir ??= folderWithBuild()) : folderWithBuild();
      try {
        s.blocks.forEach((b, k) => {
          const r = runBlock(dir, b, `block-${b.line}-${k}`);
          expect(r.status, `docs/library.md line ${b.line} (${b.lang}) failed:\n${r.stderr}`).toBe(0);
          expect(r.stderr, `docs/library.md line ${b.line} wrote to stderr`).toBe('');
        });
      } finally {
        if (!shared.has(s.title)) rmSync(dir, { recursive: true, force: true });
      }
    });
  }
});
