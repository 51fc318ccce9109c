/**
 * The regular-grid surface model: a flat row-major array of values (NaN marks nodata),
 * an affine transform from (col, row) to map coordinates, and an optional CRS.
 */

/** GDAL-style geotransform: [x0, dx, rx, y0, ry, dy]; map x = x0 + col·dx + row·rx, map y = y0 + col·ry + row·dy, at pixel corners. */
export type GeoTransform = [number, number, number, number, number, number];

export interface Crs {
  /** EPSG code when known. */
  epsg?: number;
  /** Human-readable name or WKT when known. */
  name?: string;
  /** True when coordinates are longitude/latitude in degrees. */
  geographic?: boolean;
  /** Linear unit of the horizontal coordinates ('metre', 'foot', 'degree', …) when known. */
  linearUnit?: string;
}

export type GridValues = Float32Array | Float64Array;

export interface GridInit {
  width: number;
  height: number;
  values: GridValues;
  transform?: GeoTransform;
  crs?: Crs | null;
  /** The nodata value of the source file, kept so writers can reuse it. NaN cells are nodata in `values`. */
  nodata?: number | null;
  /** The values hold no −0 already (another Grid normalised them): skip that pass, write nothing. */
  normalised?: boolean;
}

/**
 * Zeroed grid values on shared memory (a SharedArrayBuffer costs what an ArrayBuffer does), so a
 * worker thread can read them without a copy. Loaders allocate their grids here.
 */
export function gridValues(cells: number, float64: boolean): GridValues {
  return float64 ? new Float64Array(new SharedArrayBuffer(8 * cells)) : new Float32Array(new SharedArrayBuffer(4 * cells));
}

/** Largest cell count sill accepts on one grid (arrays of this many float64 would take 8 GiB). */
export const MAX_CELLS = 1_000_000_000;

export class Grid {
  readonly kind = 'grid' as const;
  readonly width: number;
  readonly height: number;
  readonly values: GridValues;
  readonly transform: GeoTransform;
  readonly crs: Crs | null;
  readonly nodata: number | null;

  constructor(init: GridInit) {
    const { width, height, values } = init;
    if (!Number.isInteger(width) || !Number.isInteger(height) || width < 1 || height < 1) {
      throw new RangeError(`grid dimensions must be positive integers, got ${width}×${height}`);
    }
    if (values.length !== width * height) {
      throw new RangeError(`grid of ${width}×${height} needs ${width * height} values, got ${values.length}`);
    }
    this.width = width;
    this.height = height;
    this.values = values;
    // Simulation of simplicity orders by (value, index); -0 and +0 are equal values, so make them one bit pattern.
    if (init.normalised !== true) for (let i = 0; i < values.length; i++) if (values[i] === 0) values[i] = 0;
    this.transform = init.transform ?? [0, 1, 0, 0, 0, 1];
    this.crs = init.crs ?? null;
    this.nodata = init.nodata ?? null;
  }

  get size(): number {
    return this.width * this.height;
  }

  /** Number of cells holding a value (not nodata). */
  validCount(): number {
    const v = this.values;
    let n = 0;
    for (let i = 0; i < v.length; i++) if (v[i] === v[i]) n++;
    return n;
  }

  /** Map x of the centre of cell (col, row). */
  x(col: number, row: number): number {
    const t = this.transform;
    return t[0] + (col + 0.5) * t[1] + (row + 0.5) * t[2];
  }

  /** Map y of the centre of cell (col, row). */
  y(col: number, row: number): number {
    const t = this.transform;
    return t[3] + (col + 0.5) * t[4] + (row + 0.5) * t[5];
  }

  /** Nominal cell size [|dx|, |dy|] along columns and rows, in CRS units. */
  cellSize(): [number, number] {
    const t = this.transform;
    return [Math.hypot(t[1], t[4]), Math.hypot(t[2], t[5])];
  }
}
