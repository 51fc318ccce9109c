/**
 * Checks that a loaded grid can be analysed at all.
 */
import { InputError } from '../errors.js';
import type { Grid } from '../surface/grid.js';

/**
 * Refuse a grid narrower or shorter than 2 cells, or one with no valid cell.
 * `source` names the input in the message.
 */
export function checkGridUsable(grid: Grid, source: string): void {
  if (grid.width < 2 || grid.height < 2) {
    throw new InputError(
      `${source}: the grid is too small (${grid.width} column${grid.width === 1 ? '' : 's'} × ${grid.height} row${grid.height === 1 ? '' : 's'}); ` +
        'it needs at least 2 rows and 2 columns',
    );
  }
  if (grid.validCount() === 0) {
    const nd = grid.nodata === null ? '' : ` (nodata value ${grid.nodata})`;
    throw new InputError(
      `${source}: the grid is empty: all ${grid.width}×${grid.height} cells are nodata${nd}; ` +
        'it needs at least one cell with a value — check the nodata value and the band',
    );
  }
}
