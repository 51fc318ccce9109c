import { describe, it, expect, beforeAll } from 'vitest';
import { writeFileSync, readFileSync, existsSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { sill, tempDir } from '../cli/run.js';
import { Grid } from '../../src/surface/grid.js';
import { surveyReport } from '../../src/report/survey.js';
import { buildSurveyReport } from '../../src/render/html/survey.js';
import { renderHtml, clientScript } from '../../src/render/html/page.js';

let dir: string;
beforeAll(() => {
  dir = tempDir('sill-report-');
  // paraboloid with a small tilt on a 9 × 7 lattice: one pit (analytic)
  const lines = ['x y z'];
  for (let r = 0; r < 7; r++) for (let c = 0; c < 9; c++) lines.push(`${c * 10} ${r * 10} ${(c - 4) ** 2 + (r - 3) ** 2 + 0.01 * c}`);
  writeFileSync(join(dir, 'bowl.txt'), lines.join('\n') + '\n');
});

/** sin x · sin y on a 24 × 24 torus: 2 pits, 4 passes, 2 peaks (analytic). */
function torus(): Grid {
  const n = 24, v = new Float64Array(n * n);
  for (let r = 0; r < n; r++) for (let c = 0; c < n; c++) v[r * n + c] = Math.sin((2 * Math.PI * (c + 0.5)) / n) * Math.sin((2 * Math.PI * (r + 0.5)) / n) + 1e-6 * (r * n + c);
  return new Grid({ width: n, height: n, values: v });
}

function dataOf(html: string): Record<string, any> {
  const m = /<script type="application\/json" id="sill-data">([\s\S]*?)<\/script>/.exec(html)!;
  return JSON.parse(m[1]);
}

describe('report page (library)', () => {
  const surface = torus();
  const { result, report } = surveyReport(surface, { boundary: 'periodic' }, 'torus');
  const built = buildSurveyReport(surface, result, report, { commandLine: 'sill survey torus --boundary periodic', files: [] });
  const html = renderHtml(built.doc);

  it('shows every critical point of sin·sin on a torus, each kind with its own shape', () => {
    // Source: analytic — sin x sin y on the torus has 2 minima, 4 saddles, 2 maxima.
    expect(report.euler).toMatchObject({ pits: 2, passes: 4, peaks: 2, characteristic: 0, holds: true });
    const kinds = [...built.svgs.map.matchAll(/class="mk mk-(pit|pass|peak)"/g)].map((m) => m[1]);
    expect(kinds.sort()).toEqual(['pass', 'pass', 'pass', 'pass', 'peak', 'peak', 'pit', 'pit']);
    expect(built.doc.map.markers).toBe(8);
  });

  it('is one self-contained file: no external scripts, styles, fonts, images or fetches', () => {
    expect(html).not.toMatch(/<link\b/i);
    expect(html).not.toMatch(/<script[^>]+src=/i);
    expect(html).not.toMatch(/@import|[^.\w]url\(\s*['"]?(?!#)/i);
    expect(html).not.toMatch(/\bfetch\(|XMLHttpRequest|WebSocket|EventSource/);
    // the only http(s) text is the SVG namespace name (an identifier, never fetched)
    const urls = [...html.matchAll(/https?:\/\/[^\s"'<>)]+/g)].map((m) => m[0]);
    expect(new Set(urls)).toEqual(new Set(['http://www.w3.org/2000/svg']));
    for (const m of html.matchAll(/\shref="([^"]*)"/g)) expect(m[1]).toMatch(/^(data:image\/png;base64,|#|[\w.-]+\.(csv|json|geojson|svg|png)$)/);
    expect(html).toMatch(/Content-Security-Policy" content="default-src 'none'/);
  });

  it('carries parseable data and a script that compiles', () => {
    const d = dataOf(html);
    expect(d.frame).toMatchObject({ width: 24, height: 24, factor: 1 });
    expect(d.tables.map((t: { id: string }) => t.id)).toEqual(['critical-points', 'pairs']);
    expect(d.tables[0].rows).toHaveLength(8);
    expect(d.tables[0].columns.every((c: { unit: string; type: string }) => c.type !== 'num' || c.unit.length > 0)).toBe(true);
    expect(() => new Function(clientScript())).not.toThrow();
  });

  it('has a header with the run facts and no terrain caution for an energy surface', () => {
    const labels = built.doc.header.map((h) => h.label);
    expect(labels).toEqual(['Input', 'Size', 'CRS', 'Connectivity', 'Boundary', 'Euler check', 'Parameters', 'Command', 'sill version']);
    expect(built.doc.cautions).toEqual([]);
    expect(html).toContain('χ = 0 by counting simplices');
  });

  it('gives every figure a title and a description', () => {
    for (const id of ['map', 'tree', 'persistence']) {
      expect(html).toMatch(new RegExp(`<svg[^>]*id="${id}"[^>]*role="img" aria-labelledby="${id}-title ${id}-desc"`));
      expect(html).toMatch(new RegExp(`<title id="${id}-title">[^<]+</title><desc id="${id}-desc">[^<]+</desc>`));
    }
  });
});

describe('sill survey --report / --png (command line)', () => {
  it('writes report.html and the standalone figures beside the other files', () => {
    const out = join(dir, 'r1');
    const r = sill(['survey', join(dir, 'bowl.txt'), '-o', out, '--report']);
    expect(r.code).toBe(0);
    expect(readdirSync(out).sort()).toEqual(['.sill-manifest.json', 'critical-points.csv', 'critical-points.geojson', 'map.svg', 'merge-tree.json', 'persistence.svg', 'report.html', 'report.json', 'results.gpkg', 'tree.svg']);
    expect(r.stdout).toContain(join(out, 'report.html'));
    const html = readFileSync(join(out, 'report.html'), 'utf8');
    // open boundary reads as terrain: the screening caution is in the page
    expect(html).toContain('not replace hydraulic modelling');
    expect(html).toContain('Local codes and floodplain rules govern');
    expect(html).toContain(`sill survey ${join(dir, 'bowl.txt')} --connectivity 8 --boundary open --min-persistence 0 -o ${out} --report`);
    for (const f of ['map.svg', 'tree.svg', 'persistence.svg']) expect(readFileSync(join(out, f), 'utf8')).toMatch(/^<\?xml version="1.0" encoding="UTF-8"\?>\n<svg xmlns="http:\/\/www.w3.org\/2000\/svg"/);
  });

  it('refuses --report without -o (exit 2, one line) and writes nothing', () => {
    const r = sill(['survey', join(dir, 'bowl.txt'), '--report']);
    expect(r.code).toBe(2);
    expect(r.stderr.trim().split('\n')).toHaveLength(1);
    expect(r.stderr).toMatch(/--report writes files: add -o DIR/);
  });

  it('--png renders the map to a PNG at twice the figure size', () => {
    const out = join(dir, 'r2');
    const r = sill(['survey', join(dir, 'bowl.txt'), '-o', out, '--png', '--quiet']);
    expect(r.code).toBe(0);
    expect(existsSync(join(out, 'report.html'))).toBe(false);
    const png = readFileSync(join(out, 'map.png'));
    expect([...png.subarray(0, 8)]).toEqual([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]);
    // IHDR width: the map figure's width times 2 (the same figure --report writes as map.svg)
    const again = join(dir, 'r3');
    expect(sill(['survey', join(dir, 'bowl.txt'), '-o', again, '--report', '--quiet']).code).toBe(0);
    const figW = Number(/viewBox="0 0 ([\d.]+) /.exec(readFileSync(join(again, 'map.svg'), 'utf8'))![1]);
    expect(png.readUInt32BE(16)).toBe(Math.round(figW * 2));
  });
});

describe('sill ponds --report (command line)', () => {
  it('writes the report with the depressions linked across map, tree and table', () => {
    // two bowls side by side, joined by a saddle, in a rim that drains east: z = matrix rows
    const W = 14, H = 9, rows: string[] = [];
    for (let r = 0; r < H; r++) {
      const line: number[] = [];
      for (let c = 0; c < W; c++) {
        const a = (c - 4) ** 2 + (r - 4) ** 2, b = (c - 9) ** 2 + (r - 4) ** 2;
        line.push(Math.round(100 * (10 + Math.min(a, b + 1) * 0.3 - (c === W - 1 ? 2 : 0))) / 100);
      }
      rows.push(line.join(' '));
    }
    writeFileSync(join(dir, 'bowls.txt'), rows.join('\n') + '\n');
    const out = join(dir, 'p1');
    const r = sill(['ponds', join(dir, 'bowls.txt'), '--origin', '0.5,8.5', '--spacing', '1,-1', '-o', out, '--report', '--quiet']);
    expect(r.code, r.stderr).toBe(0);
    const rep = JSON.parse(readFileSync(join(out, 'report.json'), 'utf8'));
    expect(rep.depressions.length).toBeGreaterThan(0);
    const html = readFileSync(join(out, 'report.html'), 'utf8');
    const data = dataOf(html);
    expect(data.tables[0].id).toBe('depressions');
    expect(data.tables[0].keys.sort()).toEqual(rep.depressions.map((d: { id: number }) => `d${d.id}`).sort());
    for (const d of rep.depressions) {
      // each depression: an outline on the map, a node in the tree, a row in the table
      expect(html).toMatch(new RegExp(`<path class="ol" data-k="d${d.id}" d="M`));
      expect(html).toMatch(new RegExp(`<g class="mk mk-(pit|pass)" data-k="d${d.id}"[^>]*transform="translate`));
    }
    expect(html).toContain('Screening information only');
    expect(html).toContain('--origin 0.5,8.5 --spacing 1,-1');
  });
});

describe('scattered samples', () => {
  it('are drawn interpolated on their triangles, features at their own coordinates', async () => {
    const { Mesh } = await import('../../src/surface/mesh.js');
    // a single Gaussian well sampled on a jittered lattice: one pit (analytic), at the sample nearest (50, 30)
    const xs: number[] = [], ys: number[] = [], vs: number[] = [];
    for (let j = 0; j < 13; j++) for (let i = 0; i < 21; i++) {
      const x = i * 5 + ((i * 7 + j * 3) % 5) * 0.3, y = j * 5 + ((i * 3 + j * 5) % 5) * 0.3;
      xs.push(x); ys.push(y); vs.push(-Math.exp(-((x - 50) ** 2 + (y - 30) ** 2) / 300) + 1e-4 * x);
    }
    const mesh = new Mesh(Float64Array.from(xs), Float64Array.from(ys), Float64Array.from(vs));
    const { result, report } = surveyReport(mesh, { boundary: 'closed' }, 'well');
    const built = buildSurveyReport(mesh, result, report, { commandLine: 'sill survey well', files: [] });
    const d = dataOf(renderHtml(built.doc));
    expect(d.interpolated).toBe(true);
    const pit = report.criticalPoints.toArray().find((c) => c.kind === 'pit')!;
    expect(Math.hypot(pit.x - 50, pit.y - 30)).toBeLessThan(4);
    // the pit marker sits at the inverse transform of its (x, y): u = (x − x0)/dx, v = (y − y0)/dy
    const t = d.frame.transform as number[];
    const m = new RegExp(`data-k="v${pit.index}" transform="translate\\(([-\\d.]+) ([-\\d.]+)\\)`).exec(built.svgs.map)!;
    expect(Number(m[1])).toBeCloseTo((pit.x - t[0]) / t[1], 2);
    expect(Number(m[2])).toBeCloseTo((pit.y - t[3]) / t[5], 2);
    expect(built.doc.map.markers).toBe(report.criticalPoints.length);
  });
});
