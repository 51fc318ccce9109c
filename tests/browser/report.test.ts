/**
 * The demo reports in a real browser: Debian's Chromium driven by playwright-core (no browser
 * download). Every report.html written by `sill demo` is opened from disk and checked: no console
 * errors, no network requests, the figures carry the expected markers, markers sit on their cells,
 * and selection links tables and figures both ways. Screenshots go to test-output/browser/.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, basename, dirname } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { chromium, type BrowserContext, type Page } from 'playwright-core';
import { sill } from '../cli/run.js';
import { CHROMIUM, runs, skipNote } from '../prereq.js';

const SHOTS = join(dirname(fileURLToPath(import.meta.url)), '..', '..', 'test-output', 'browser');

let demo: string;
let profile: string;
let ctx: BrowserContext;
const reports: string[] = [];

beforeAll(async () => {
  if (!runs('browser')) return;
  if (!existsSync(CHROMIUM)) {
    throw new Error(`browser tests need Chromium at ${CHROMIUM}: apt-get install -y chromium (npm test installs it where it may)`);
  }
  demo = mkdtempSync(join(tmpdir(), 'sill-browser-'));
  const r = sill(['demo', '-o', demo]);
  if (r.code !== 0) throw new Error(`sill demo failed: ${r.stderr}`);
  for (const d of readdirSync(demo)) if (existsSync(join(demo, d, 'report.html'))) reports.push(join(demo, d, 'report.html'));
  mkdirSync(SHOTS, { recursive: true });
  profile = mkdtempSync(join(tmpdir(), 'sill-chromium-'));
  ctx = await chromium.launchPersistentContext(profile, {
    executablePath: CHROMIUM,
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update'],
    viewport: { width: 1400, height: 1000 },
  });
}, 60_000);

afterAll(async () => {
  await ctx?.close();
  if (profile) rmSync(profile, { recursive: true, force: true });
  if (demo) rmSync(demo, { recursive: true, force: true });
});

interface Opened { page: Page; errors: string[]; requests: string[]; url: string }

async function open(file: string): Promise<Opened> {
  const page = await ctx.newPage();
  const errors: string[] = [], requests: string[] = [];
  page.on('console', (m) => { if (m.type() === 'error' || m.type() === 'warning') errors.push(`${m.type()}: ${m.text()}`); });
  page.on('pageerror', (e) => errors.push(`pageerror: ${e.message}`));
  page.on('request', (q) => requests.push(q.url()));
  const url = pathToFileURL(file).href;
  await page.goto(url);
  await page.waitForSelector('html[data-ready="1"]', { timeout: 10_000 });
  return { page, errors, requests, url };
}

interface Expect {
  /** Markers in the map, the tree and the persistence diagram. */
  map: number;
  tree: number;
  persistence: number;
  /** Features with their plot positions (grid units; cell (c, r) has its centre at c + ½, r + ½), to check placement. */
  cells: { key: string; selector: string; u: number; v: number }[];
  /** The first table's id and a numeric column to sort by. */
  table: string;
  sortBy: string;
}

/** What each figure should show, from the run's own report.json (and merge-tree.json). */
function expected(dir: string): Expect {
  const rep = JSON.parse(readFileSync(join(dir, 'report.json'), 'utf8'));
  if (rep.schema === 'sill/survey@1') {
    const tree = JSON.parse(readFileSync(join(dir, 'merge-tree.json'), 'utf8'));
    const removedNonzero = rep.counts.removedPairs.dim0 + rep.counts.removedPairs.dim1 - (rep.minPersistence > 0 ? rep.counts.zeroPersistencePairs : 0);
    const born = new Set(rep.pairs.filter((p: { dim: number }) => p.dim === 0).map((p: { birthAt: { index: number } }) => p.birthAt.index));
    const essential = rep.criticalPoints.filter((c: { kind: string; index: number }) => c.kind === 'pit' && !born.has(c.index)).length;
    return {
      map: rep.criticalPoints.length, tree: tree.join.nodes.length, persistence: rep.pairs.length + removedNonzero + essential,
      cells: rep.criticalPoints.slice(0, 5).map((c: { index: number; col: number; row: number }) => ({ key: `v${c.index}`, selector: 'g.mk', u: c.col + 0.5, v: c.row + 0.5 })),
      table: 'critical-points', sortBy: 'value',
    };
  }
  if (rep.schema === 'sill/ponds@1') {
    const deps = rep.depressions as { id: number; parent: number | null; children: number[]; pit: { col: number; row: number }; pour: { col: number; row: number } }[];
    const top = deps.filter((d) => d.parent === null).length;
    const leaves = deps.filter((d) => d.children.length === 0);
    return {
      // a pour point ➤ per depression and a pit ▽ per innermost one; a tree node per depression and a spill cap on each
      // outermost one; one pair (pit, spill) each
      map: deps.length + leaves.length, tree: deps.length + top, persistence: deps.length,
      cells: [
        ...leaves.slice(0, 3).map((d) => ({ key: `d${d.id}`, selector: 'g.mk-pit', u: d.pit.col + 0.5, v: d.pit.row + 0.5 })),
        ...deps.slice(0, 3).map((d) => ({ key: `d${d.id}`, selector: 'g.mk-pour', u: d.pour.col + 0.5, v: d.pour.row + 0.5 })),
      ],
      table: 'depressions', sortBy: 'spill level',
    };
  }
  if (rep.schema === 'sill/runoff@1') {
    type D = { id: number; parent: number | null; children: number[]; pit: { col: number; row: number }; pour: { col: number; row: number }; waterVolume: number; received: number };
    const deps = rep.depressions as D[];
    // the page marks the 400 depressions holding the most water (src/render/html/runoff.ts): a pour point ➤ each and a
    // pit ▽ on the innermost ones; the spill-level tree has a node per depression and a spill cap on each outermost one
    const marked = [...deps].sort((a, b) => b.waterVolume - a.waterVolume || b.received - a.received || a.id - b.id).slice(0, 400);
    const leaves = marked.filter((d) => d.children.length === 0);
    return {
      map: marked.length + leaves.length, tree: deps.length + deps.filter((d) => d.parent === null).length, persistence: 0,
      cells: [
        ...leaves.slice(0, 3).map((d) => ({ key: `d${d.id}`, selector: 'g.mk-pit', u: d.pit.col + 0.5, v: d.pit.row + 0.5 })),
        ...marked.slice(0, 3).map((d) => ({ key: `d${d.id}`, selector: 'g.mk-pour', u: d.pour.col + 0.5, v: d.pour.row + 0.5 })),
      ],
      table: 'depressions', sortBy: 'received',
    };
  }
  if (rep.schema === 'sill/barriers@1') {
    // the diagram shows the survey of the same surface at the barriers' threshold: ask sill survey for it
    const sv = sill(['survey', rep.input, '--json', '--boundary', rep.boundary, '--connectivity', String(rep.connectivity), '--min-persistence', String(rep.minPersistence.value / rep.units.factor)]);
    if (sv.code !== 0) throw new Error(sv.stderr);
    const s = JSON.parse(sv.stdout);
    const removedNonzero = s.counts.removedPairs.dim0 + s.counts.removedPairs.dim1 - (s.minPersistence > 0 ? s.counts.zeroPersistencePairs : 0);
    const born = new Set(s.pairs.filter((p: { dim: number }) => p.dim === 0).map((p: { birthAt: { index: number } }) => p.birthAt.index));
    const essential = s.criticalPoints.filter((c: { kind: string; index: number }) => c.kind === 'pit' && !born.has(c.index)).length;
    // markers at the refined points: map (x, y) → plot by the inverse of the north-up transform, wrapped on periodic axes
    const t = rep.surface.transform as number[];
    const W = rep.surface.width, H = rep.surface.height;
    const wrapU = (u: number) => (rep.periodic.x !== null ? ((u % W) + W) % W : u), wrapV = (v: number) => (rep.periodic.y !== null ? ((v % H) + H) % H : v);
    const at = (s: { id: string; x: number; y: number; refined: { x: number; y: number } | null }, sel: string) => {
      const [x, y] = s.refined ? [s.refined.x, s.refined.y] : [s.x, s.y];
      return { key: `s:${s.id}`, selector: sel, u: wrapU((x - t[0]) / t[1]), v: wrapV((y - t[3]) / t[5]) };
    };
    return {
      map: rep.minima.length + rep.transitionStates.length, tree: rep.disconnectivity.nodes.length,
      persistence: s.pairs.length + removedNonzero + essential,
      cells: [...rep.minima.slice(0, 3).map((m: never) => at(m, 'g.mk-pit')), ...rep.transitionStates.slice(0, 3).map((m: never) => at(m, 'g.mk-pass'))],
      table: 'barriers', sortBy: 'forward',
    };
  }
  throw new Error(`no expectations for ${rep.schema}`);
}

describe.skipIf(!runs('browser'))(`demo reports in Chromium${skipNote('browser')}`, () => {
  it('the demo wrote reports to check', () => {
    expect(reports.length).toBeGreaterThanOrEqual(2);
  });

  it('open from disk with no console errors and no network requests, figures with the expected markers', async () => {
    for (const file of reports) {
      const dir = dirname(file), name = basename(dir);
      const { page, errors, requests, url } = await open(file);
      const want = expected(dir);
      expect(await page.locator('#map g.mk').count(), `${name}: map markers`).toBe(want.map);
      expect(await page.locator('#tree g.mk').count(), `${name}: tree markers`).toBe(want.tree);
      expect(await page.locator('#persistence g.mk').count(), `${name}: diagram markers`).toBe(want.persistence);
      // the raster layer decoded and drew
      const img = await page.evaluate(() => {
        const im = document.querySelector('#map image') as SVGImageElement;
        const r = im.getBoundingClientRect();
        return { w: r.width, h: r.height };
      });
      expect(img.w).toBeGreaterThan(100);
      await page.screenshot({ path: join(SHOTS, `${name}.png`), fullPage: true });
      expect(errors, `${name}: console`).toEqual([]);
      expect(requests.filter((u) => u !== url && !u.startsWith('data:')), `${name}: requests`).toEqual([]);
      await page.close();
    }
  });

  it('markers sit on their cells, before and after zooming', async () => {
    for (const file of reports) {
      const dir = dirname(file);
      const rep = JSON.parse(readFileSync(join(dir, 'report.json'), 'utf8'));
      const feats = expected(dir).cells;
      const { page } = await open(file);
      const check = async () => {
        for (const f of feats) {
          const got = await page.evaluate(({ k, sel, u, v }) => {
            const plot = document.getElementById('map-plot') as unknown as SVGSVGElement;
            // the plot's viewport on screen: the frame drawn around it (the nested <svg>'s own box would include clipped overflow)
            const vb = plot.viewBox.baseVal, r = document.querySelector('#map .plot-frame')!.getBoundingClientRect();
            const g = document.querySelector(`#map ${sel}[data-k="${k}"]`) as SVGGElement | null;
            if (!g) return null;
            const m = g.getScreenCTM()!;
            // expected: the plot point (cell centre, or refined point) through the current viewBox onto the plot's box
            return { x: m.e, y: m.f, ex: r.left + ((u - vb.x) / vb.width) * r.width, ey: r.top + ((v - vb.y) / vb.height) * r.height };
          }, { k: f.key, sel: f.selector, u: f.u, v: f.v });
          expect(got).not.toBeNull();
          expect(Math.abs(got!.x - got!.ex)).toBeLessThan(0.75);
          expect(Math.abs(got!.y - got!.ey)).toBeLessThan(0.75);
        }
      };
      await check();
      await page.locator('#map .plot-frame').scrollIntoViewIfNeeded();
      const box = (await page.locator('#map .plot-frame').boundingBox())!;
      await page.mouse.move(box.x + box.width * 0.4, box.y + box.height * 0.6);
      await page.mouse.wheel(0, -400);
      await page.waitForTimeout(100);
      const vb = await page.evaluate(() => (document.getElementById('map-plot') as unknown as SVGSVGElement).viewBox.baseVal.width);
      expect(vb).toBeLessThan(rep.surface.width);
      await check();
      // pointer read-out over the raster names the cell under it
      await page.mouse.move(box.x + box.width * 0.5, box.y + box.height * 0.5);
      await expect.poll(async () => page.locator('#map-readout').textContent()).toMatch(/cell \(\d+, \d+\)/);
      await page.close();
    }
  });

  it('clicking a table row highlights its feature on the map, and clicking a marker highlights its row', async () => {
    for (const file of reports) {
      const name = basename(dirname(file));
      const want = expected(dirname(file));
      const T = `#table-${want.table}`;
      const { page } = await open(file);
      const row = page.locator(`${T} tbody tr`).first();
      const key = (await row.getAttribute('data-k'))!;
      await row.click();
      await expect.poll(() => page.locator(`#map g.mk[data-k="${key}"]`).first().getAttribute('class')).toMatch(/\bsel\b/);
      expect(await row.getAttribute('class')).toMatch(/\bsel\b/);
      // a marker elsewhere: the third row's feature, clicked on the map
      const other = (await page.locator(`${T} tbody tr`).nth(2).getAttribute('data-k'))!;
      await page.locator('[data-zoom="reset"]').click();
      await page.locator(`#map g.mk[data-k="${other}"] .mk-body`).first().click({ force: true });
      const selRows = page.locator(`${T} tbody tr.sel`);
      await expect.poll(() => selRows.count()).toBe(1);
      expect(await selRows.first().getAttribute('data-k')).toBe(other);
      expect(await page.locator(`#map g.mk[data-k="${key}"]`).first().getAttribute('class')).not.toMatch(/\bsel\b/);
      // the tree node of the same feature is highlighted too, when it is in the tree
      const inTree = await page.locator(`#tree g.mk[data-k="${other}"]`).count();
      if (inTree) expect(await page.locator(`#tree g.mk[data-k="${other}"]`).first().getAttribute('class')).toMatch(/\bsel\b/);
      await page.locator('#sec-map').screenshot({ path: join(SHOTS, `${name}-selected.png`) });
      // the "show all" button shows only when rows are left out
      const rowsShown = await page.locator(`${T} tbody tr`).count();
      expect(await page.locator(`#tbl-${want.table} .tablebar button`, { hasText: /^show all/ }).isVisible()).toBe(rowsShown < (await page.evaluate((id) => {
        const d = JSON.parse(document.getElementById('sill-data')!.textContent!);
        return d.tables.find((t: { id: string }) => t.id === id).rows.length;
      }, want.table)));
      // sorting by a numeric column orders the rows
      const heads = await page.locator(`${T} th`).allTextContents();
      const col = heads.findIndex((h) => h.startsWith(want.sortBy)) + 1;
      expect(col).toBeGreaterThan(0);
      await page.locator(`${T} th`).nth(col - 1).locator('button').click();
      const vals = await page.locator(`${T} tbody tr td:nth-child(${col})`).allTextContents();
      const nums = vals.map((v) => Number(v.replace('−', '-')));
      expect(nums.every((x) => Number.isFinite(x))).toBe(true);
      expect(nums).toEqual([...nums].sort((a, b) => a - b));
      await page.close();
    }
  });

  it('text on the page meets the WCAG AA contrast ratio (computed styles, in the browser)', async () => {
    const { page } = await open(reports[0]);
    const worst = await page.evaluate(() => {
      // WCAG 2.x relative luminance and contrast ratio
      const lum = (c: number[]) => {
        const l = c.map((v) => { const s = v / 255; return s <= 0.04045 ? s / 12.92 : ((s + 0.055) / 1.055) ** 2.4; });
        return 0.2126 * l[0] + 0.7152 * l[1] + 0.0722 * l[2];
      };
      const rgb = (s: string) => (s.match(/[\d.]+/g) ?? []).map(Number);
      const bgOf = (e: Element | null): number[] => {
        for (; e; e = e.parentElement) {
          const c = rgb(getComputedStyle(e).backgroundColor);
          if (c.length >= 3 && (c.length < 4 || c[3] > 0.5)) return c.slice(0, 3);
        }
        return [255, 255, 255];
      };
      let min = { ratio: 99, text: '' };
      for (const e of Array.from(document.querySelectorAll('body *:not(svg):not(svg *):not(script):not(style)'))) {
        const own = Array.from(e.childNodes).some((n) => n.nodeType === 3 && (n.textContent ?? '').trim());
        if (!own || (e as HTMLElement).offsetParent === null) continue;
        const fg = rgb(getComputedStyle(e).color).slice(0, 3), bg = bgOf(e);
        const a = lum(fg), b = lum(bg);
        const ratio = (Math.max(a, b) + 0.05) / (Math.min(a, b) + 0.05);
        if (ratio < min.ratio) min = { ratio, text: (e.textContent ?? '').trim().slice(0, 40) };
      }
      return min;
    });
    expect(worst.ratio, `lowest contrast at "${worst.text}"`).toBeGreaterThanOrEqual(4.5);
    await page.close();
  });
});
