/**
 * A mosaic: tiles placed on one lattice that together form one surface (DESIGN §8).
 *
 * This file is the contract between the mosaic readers (src/io: a .vrt, a folder of GeoTIFF
 * tiles, several GeoTIFF paths → a Mosaic) and the analyses that run on a mosaic tile by tile
 * (src/tiles: pass 1 per tile, seam merge, pass 2 per tile, reduce). All coordinates are whole
 * cells of the mosaic: global column and row, global index = row · width + col (row-major), the
 * same (value, index) order a single grid of the same cells uses.
 */
import type { Crs, GeoTransform, GridValues } from '../surface/grid.js';

/** A rectangle of the mosaic, in global cells. */
export interface CellWindow {
  col0: number;
  row0: number;
  width: number;
  height: number;
}

/** One input tile. */
export interface MosaicTile extends CellWindow {
  /** File stem, unique in the mosaic: names per-tile outputs (`filled/<name>.tif`) and messages. */
  name: string;
  /** Path of the tile's file. */
  path: string;
  /**
   * The cells this tile owns in a partition of the mosaic: the tile itself, less the rows or
   * columns it shares with a neighbour that owns them (tiles that share their edge row/column;
   * overlaps were checked equal). Owned windows never overlap and cover every tile cell once.
   */
  own: CellWindow;
  /**
   * The tile file's own geotransform, as its header gives it (added by the mosaic readers: per-tile
   * outputs are written with it, so they sit exactly where the input tile sits). It equals the
   * mosaic's shifted by (col0, row0) cells up to float rounding.
   */
  transform: GeoTransform;
}

export interface Mosaic {
  /** The mosaic's name for messages (the .vrt path, the folder, or the first file and a count). */
  source: string;
  width: number;
  height: number;
  /** Geotransform of the mosaic's (0, 0) corner; every tile's is this one shifted by whole cells. */
  transform: GeoTransform;
  crs: Crs | null;
  /** The tiles' common nodata value, for writers (cells are NaN in values either way). */
  nodata: number | null;
  /** True when the tiles hold float64 (or integer types that need it); float32 otherwise. */
  float64: boolean;
  tiles: MosaicTile[];
  /**
   * Values of a window of the mosaic (clipped to the mosaic by the caller), row-major, NaN for
   * nodata and for cells no tile covers (gaps). Reads only the tiles the window overlaps; memory is
   * the window's, never the mosaic's.
   */
  readWindow(w: CellWindow): Promise<GridValues>;
}
