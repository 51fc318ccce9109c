import { afterAll, describe, expect, it } from 'vitest';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { parseTextSurface, readTextSurface } from '../../src/io/text.js';
import { Grid } from '../../src/surface/grid.js';
import { Mesh } from '../../src/surface/mesh.js';
import { InputError } from '../../src/errors.js';
import { tempDir } from './helpers.js';

// The expectations here come from the inputs themselves: each test writes samples at known
// coordinates, and the grid cell whose centre is at (x, y) must hold the sample written there.

const f = (x: number, y: number) => 100 + 3 * x - 2 * y + 0.5 * x * y;

/** A 5-column × 4-row lattice, x = 10, 12.5, …, 20 and y = -3, -1, 1, 3. */
const XS = [10, 12.5, 15, 17.5, 20];
const YS = [-3, -1, 1, 3];

/** Deterministic shuffle (linear congruential generator). */
function shuffle<T>(a: T[], seed = 12345): T[] {
  const out = a.slice();
  let s = seed;
  for (let i = out.length - 1; i > 0; i--) {
    s = (s * 1103515245 + 12345) % 2147483648;
    const j = s % (i + 1);
    [out[i], out[j]] = [out[j], out[i]];
  }
  return out;
}

function asGrid(s: Grid | Mesh): Grid {
  expect(s).toBeInstanceOf(Grid);
  return s as Grid;
}

/** Check every cell centre against the value written at that location (NaN where nothing or nan was written). */
function expectCellsMatch(g: Grid, written: Map<string, number>): void {
  for (let r = 0; r < g.height; r++) {
    for (let c = 0; c < g.width; c++) {
      const key = `${g.x(c, r)},${g.y(c, r)}`;
      const v = g.values[r * g.width + c];
      const want = written.get(key);
      if (want === undefined || Number.isNaN(want)) expect(v, key).toBeNaN();
      else expect(v, key).toBe(want);
    }
  }
}

describe('x y value columns on a lattice', () => {
  it('builds a north-up grid from shuffled rows, with missing points as nodata', () => {
    const pts = XS.flatMap((x) => YS.map((y) => [x, y, f(x, y)] as const));
    const missing = pts.splice(7, 1)[0]; // drop one lattice point
    const text = shuffle(pts).map((p) => p.join(' ')).join('\n');
    const g = asGrid(parseTextSurface(text));
    expect([g.width, g.height]).toEqual([5, 4]);
    // corners: x from 10 − 2.5/2, y from 3 + 2/2 downwards
    expect(g.transform).toEqual([8.75, 2.5, 0, 4, 0, -2]);
    const written = new Map(pts.map(([x, y, v]) => [`${x},${y}`, v]));
    expectCellsMatch(g, written);
    const [mx, my] = missing;
    const c = XS.indexOf(mx);
    const r = YS.length - 1 - YS.indexOf(my);
    expect(g.values[r * 5 + c]).toBeNaN();
    expect(g.validCount()).toBe(19);
  });

  it('reads commas, tabs, comments, blank lines and a header line', () => {
    const rows = XS.flatMap((x) => YS.map((y) => `${x},\t${y} ,${f(x, y)}`));
    const text = ['# survey of a made-up field', '', 'easting,northing,height', ...rows.slice(0, 6), '# halfway', '', ...rows.slice(6), ''].join('\r\n');
    const g = asGrid(parseTextSurface(text));
    expectCellsMatch(g, new Map(XS.flatMap((x) => YS.map((y) => [`${x},${y}`, f(x, y)] as const))));
  });

  it('tolerates round-off in the coordinates', () => {
    // 0.1·i computed in binary floating point (0.30000000000000004, …) is still a lattice of spacing 0.1
    const rows: string[] = [];
    for (let i = 0; i < 6; i++) for (let j = 0; j < 3; j++) rows.push(`${i * 0.1} ${j * 0.7} ${i - j}`);
    expect(rows).toContain('0.30000000000000004 0 3');
    const g = asGrid(parseTextSurface(rows.join('\n')));
    expect([g.width, g.height]).toEqual([6, 3]);
    expect(g.transform[1]).toBeCloseTo(0.1, 15);
    expect(g.transform[5]).toBeCloseTo(-0.7, 15);
    expect(g.values[2 * 6 + 3]).toBe(3); // bottom row (y = 0), x = 0.3: value i − j = 3
  });

  it('uses the columns option and marks nan and the nodata value as nodata', () => {
    const text = ['id x y z', '1 0 0 5', '2 1 0 -9999', '3 0 1 nan', '4 1 1 7'].join('\n');
    const g = asGrid(parseTextSurface(text, { columns: [2, 3, 4], nodata: -9999 }));
    expect(Array.from(g.values)).toEqual([NaN, 7, 5, NaN]); // row 0 is y = 1: (0,1) nan, (1,1) 7; row 1 is y = 0
    expect(g.nodata).toBe(-9999);
  });

  it('refuses two rows for the same lattice point, naming both lines', () => {
    const text = ['x y z', '0 0 1', '1 0 2', '0 1 3', '1 1 4', '1 0 5'].join('\n');
    expect(() => parseTextSurface(text, { source: 'dup.xyz' })).toThrow(/dup\.xyz lines 3 and 6 both give the lattice point \(1, 0\)/);
  });
});

describe('scattered x y value samples', () => {
  const scattered = [
    [0.13, 0.71, 4.5], [2.9, 0.05, 3.25], [1.7, 2.33, 1.0], [3.61, 3.02, 2.75],
    [0.4, 3.9, 6.0], [2.2, 1.1, 0.5], [3.3, 1.9, 2.0], [1.05, 1.45, 5.5],
  ];

  it('become a Mesh with every sample', () => {
    const m = parseTextSurface(scattered.map((p) => p.join(' ')).join('\n'), { layout: 'columns' });
    expect(m).toBeInstanceOf(Mesh);
    const mesh = m as Mesh;
    expect(Array.from(mesh.x)).toEqual(scattered.map((p) => p[0]));
    expect(Array.from(mesh.values)).toEqual(scattered.map((p) => p[2]));
  });

  it('drop samples whose value is nan or the nodata value', () => {
    const rows = scattered.map((p) => p.join(','));
    rows[2] = '1.7,2.33,nan';
    rows[5] = '2.2,1.1,-1';
    const mesh = parseTextSurface(rows.join('\n'), { nodata: -1, layout: 'columns' }) as Mesh;
    expect(mesh).toBeInstanceOf(Mesh);
    expect(mesh.size).toBe(6);
    expect(Array.from(mesh.y)).not.toContain(2.33);
  });

  it('a sparse lattice (more than 4 nodes per sample) is treated as scattered', () => {
    // on the integer lattice, but spread over 11 × 11 = 121 nodes for 5 samples
    const text = ['0 0 1', '10 0 2', '0 10 3', '10 10 4', '3 7 5'].join('\n');
    expect(parseTextSurface(text, { layout: 'columns' })).toBeInstanceOf(Mesh);
  });

  it('refuse repeated locations, naming both lines', () => {
    const rows = scattered.map((p) => p.join(' '));
    rows.push('3.3 1.9 8');
    expect(() => parseTextSurface(rows.join('\n'), { source: 's.txt', layout: 'columns' })).toThrow(/s\.txt lines 7 and 9 both give a sample at \(3\.3, 1\.9\)/);
  });

  it('refuse collinear samples with the source named', () => {
    expect(() => parseTextSurface('0 0 1\n1 1 2\n2 2 3\n3 3 4\n7 7 1', { source: 'line.txt', layout: 'columns' })).toThrow(/line\.txt: .*one line/);
  });
});

describe('a matrix of values', () => {
  it('uses origin (centre of the first value) and spacing', () => {
    const text = '1 2 3 4\n5 6 7 8\n9 10 11 12\n';
    const g = asGrid(parseTextSurface(text, { origin: [500, 2000], spacing: [10, -20] }));
    expect([g.width, g.height]).toEqual([4, 3]);
    expect(g.transform).toEqual([495, 10, 0, 2010, 0, -20]); // [X − DX/2, DX, 0, Y − DY/2, 0, DY]
    expect([g.x(0, 0), g.y(0, 0)]).toEqual([500, 2000]); // the first value sits at the origin
    expect([g.x(3, 2), g.y(3, 2)]).toEqual([530, 1960]);
    expect(Array.from(g.values)).toEqual([1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12]);
  });

  it('is the reading of rows with a constant count other than 3, with origin 0,0 and spacing 1,1', () => {
    const g = asGrid(parseTextSurface('# matrix\n1,2\n3,4\n5,nan\n'));
    expect([g.width, g.height]).toEqual([2, 3]);
    expect(g.transform).toEqual([-0.5, 1, 0, -0.5, 0, 1]);
    expect(Array.from(g.values)).toEqual([1, 2, 3, 4, 5, NaN]);
  });

  it('is the reading of 3-column rows when origin or spacing is given', () => {
    const g = asGrid(parseTextSurface('1 2 3\n4 5 6', { spacing: [2, 2] }));
    expect([g.width, g.height]).toEqual([3, 2]);
    expect(() => parseTextSurface('1 2 3\n4 5 6', { spacing: [2, 2], columns: [1, 2, 3] })).toThrow(/one or the other/);
  });

  it('applies the nodata value', () => {
    const g = asGrid(parseTextSurface('1 -32768\n3 4', { origin: [0, 0], spacing: [1, 1], nodata: -32768 }));
    expect(Array.from(g.values)).toEqual([1, NaN, 3, 4]);
  });
});

describe('errors name the line and column', () => {
  it('ragged rows', () => {
    const err = (() => {
      try {
        parseTextSurface('x y z\n0 0 1\n1 0 2\n0 1\n1 1 4', { source: 'r.xyz' });
      } catch (e) {
        return e as Error;
      }
    })();
    expect(err).toBeInstanceOf(InputError);
    expect(err!.message).toBe('r.xyz line 4, column 3: missing field: the row has 2 fields but line 2 has 3; every row needs the same number of fields');
    expect(() => parseTextSurface('1 2 3 4\n5 6 7 8 9', { source: 'm.txt' })).toThrow(/^m\.txt line 2, column 5: extra field/);
  });

  it('non-numeric and empty fields', () => {
    expect(() => parseTextSurface('x y z\n0 0 1\n1 abc 2', { source: 'n.xyz' })).toThrow(/^n\.xyz line 3, column 2: 'abc' is not a number/);
    expect(() => parseTextSurface('0,0,1\n1,,2\n', { source: 'e.csv' })).toThrow(/^e\.csv line 2, column 2: empty field/);
    // a header is only the first data line
    expect(() => parseTextSurface('x y z\nu v w\n0 0 1', { source: 'h.xyz' })).toThrow(/^h\.xyz line 2, column 1: 'u' is not a number/);
  });

  it('no data rows', () => {
    expect(() => parseTextSurface('# nothing\n\nx y z\n', { source: 'empty.xyz' })).toThrow(/empty\.xyz: no rows of numbers/);
  });

  it('columns beyond the rows', () => {
    expect(() => parseTextSurface('0 0 1\n1 0 2\n0 1 3', { columns: [1, 2, 4] })).toThrow(/column 4 was asked for but the rows have 3 fields/);
  });
});

describe('infinite values', () => {
  it('are an error with line and column', () => {
    expect(() => parseTextSurface('0 0 1\n1 0 inf\n0 1 2\n1 1 3', { source: 'i.xyz' })).toThrow(/^i\.xyz line 2, column 3: the value is \+Infinity/);
    expect(() => parseTextSurface('1 2\n-Infinity 4', { source: 'm.txt' })).toThrow(/^m\.txt line 2, column 1: the value is -Infinity/);
    expect(() => parseTextSurface('0 0 1\ninf 0 2\n0 1 3', { source: 'c.xyz' })).toThrow(/^c\.xyz line 2, column 1: the x coordinate is Infinity/);
  });

  it('are nodata when the nodata value is that infinity', () => {
    const g = asGrid(parseTextSurface('1 2\n-inf 4', { nodata: -Infinity }));
    expect(Array.from(g.values)).toEqual([1, 2, NaN, 4]);
    expect(() => parseTextSurface('1 2\n-inf 4', { nodata: Infinity })).toThrow(/-Infinity/);
    const h = asGrid(parseTextSurface('0 0 1\n1 0 +inf\n0 1 2\n1 1 3', { nodata: Infinity }));
    expect(h.validCount()).toBe(3);
  });
});

describe('readTextSurface', () => {
  const { dir, cleanup } = tempDir();
  afterAll(cleanup);

  it('reads a file and names it in messages', async () => {
    const p = join(dir, 'grid.csv');
    writeFileSync(p, '\ufeffx,y,z\n0,0,1\n1,0,2\n0,1,3\n1,1,4\n');
    const g = asGrid(await readTextSurface(p));
    expect(Array.from(g.values)).toEqual([3, 4, 1, 2]);
    const q = join(dir, 'bad.csv');
    writeFileSync(q, '0,0,1\n1,0,x\n');
    await expect(readTextSurface(q)).rejects.toThrow(`${q} line 2, column 3: 'x' is not a number`);
    await expect(readTextSurface(join(dir, 'absent.csv'))).rejects.toThrow(/^cannot read .*absent\.csv: no such file or directory$/);
  });
});

describe('lattice detection with printed round-off', () => {
  it('reads a 5° scan written in radians with 4 decimals as a 72×72 grid', () => {
    // Source: common practice — scan files print angles with a few decimals; 2π/72 = 0.0872664…
    const lines: string[] = [];
    for (let j = 0; j < 72; j++) for (let i = 0; i < 72; i++) {
      lines.push(`${(-Math.PI + (i * 2 * Math.PI) / 72).toFixed(4)} ${(-Math.PI + (j * 2 * Math.PI) / 72).toFixed(4)} ${Math.cos(i) + j}`);
    }
    const s = parseTextSurface(lines.join('\n'));
    expect(s.kind).toBe('grid');
    if (s.kind === 'grid') {
      expect([s.width, s.height]).toEqual([72, 72]);
      expect(s.cellSize()[0]).toBeCloseTo((2 * Math.PI) / 72, 4);
    }
  });
});
