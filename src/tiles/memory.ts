/**
 * A mosaic over a grid in memory: the grid cut into tiles (for tests and for callers that hold
 * the cells already). Cells that no tile covers read as gaps (NaN), as in a mosaic of files.
 */
import type { Grid, GridValues } from '../surface/grid.js';
import type { CellWindow, Mosaic, MosaicTile } from './mosaic.js';

export interface TileCut extends CellWindow {
  /** The cells the tile owns (default: the whole tile). */
  own?: CellWindow;
  name?: string;
}

export function gridMosaic(grid: Grid, cuts: TileCut[], source = 'grid in memory'): Mosaic {
  const W = grid.width, H = grid.height;
  const covered = new Uint8Array(W * H);
  const tiles: MosaicTile[] = cuts.map((c, k) => {
    for (let r = c.row0; r < c.row0 + c.height; r++) covered.fill(1, r * W + c.col0, r * W + c.col0 + c.width);
    const own = c.own ?? { col0: c.col0, row0: c.row0, width: c.width, height: c.height };
    const [x0, dx, rx, y0, ry, dy] = grid.transform;
    // the tile's own geotransform: the grid's shifted by whole cells to the tile's corner
    const transform: MosaicTile['transform'] = [x0 + c.col0 * dx + c.row0 * rx, dx, rx, y0 + c.col0 * ry + c.row0 * dy, ry, dy];
    return { name: c.name ?? `tile${k}`, path: '', col0: c.col0, row0: c.row0, width: c.width, height: c.height, own, transform };
  });
  const f64 = grid.values instanceof Float64Array;
  return {
    source, width: W, height: H, transform: grid.transform, crs: grid.crs, nodata: grid.nodata, float64: f64, tiles,
    readWindow: async (w: CellWindow): Promise<GridValues> => {
      if (w.col0 < 0 || w.row0 < 0 || w.col0 + w.width > W || w.row0 + w.height > H) throw new RangeError(`window ${JSON.stringify(w)} leaves the ${W}×${H} mosaic`);
      const out = f64 ? new Float64Array(w.width * w.height) : new Float32Array(w.width * w.height);
      for (let r = 0; r < w.height; r++) {
        const i0 = (w.row0 + r) * W + w.col0;
        out.set(grid.values.subarray(i0, i0 + w.width), r * w.width);
        for (let c = 0; c < w.width; c++) if (!covered[i0 + c]) out[r * w.width + c] = NaN;
      }
      return out;
    },
  };
}
