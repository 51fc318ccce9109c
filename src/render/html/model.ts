/**
 * What a report page is made of, independent of the command: a header, cautions, the three
 * figures (already rendered as SVG), sortable tables, per-feature tooltip rows, and the display
 * raster values the map shows under the pointer. Each command's adapter (survey.ts, ponds.ts,
 * barriers.ts, …) fills one of these; page.ts turns it into one self-contained HTML file.
 */
import type { Frame } from '../figures/raster.js';
import type { MapGeometry } from '../figures/map.js';

export interface HeaderRow {
  label: string;
  value: string;
  /** Shown in a monospace font (paths, command lines). */
  mono?: boolean;
  /** A pass/fail check: shown with a word and a symbol, not colour alone. */
  status?: 'ok' | 'fail';
}

export interface TableColumn {
  key: string;
  label: string;
  /** Unit shown in the header, e.g. 'm', 'm³', 'kJ/mol', 'cell'; '' for a count or a name. */
  unit: string;
  type: 'num' | 'int' | 'text';
  /** Significant digits for numbers (default 6). */
  digits?: number;
  /** Fixed decimals (trailing zeros dropped) instead of significant digits. */
  decimals?: number;
}

export interface TableSpec {
  id: string;
  title: string;
  caption: string;
  columns: TableColumn[];
  rows: (string | number | null)[][];
  /** Link key of each row (map/tree feature), or null. */
  keys: (string | null)[];
  /** Rows in the full result (rows may hold only the first of them). */
  total: number;
  /** The CSV file written beside the report. */
  csv?: string;
}

/** Values shown when the pointer is over the map: per display pixel, exactly (factor 1) or as the block's range. */
export interface HoverLayer {
  label: string;
  unit: string;
  /** 'exact': one value per cell; 'range': min and max per display block (two arrays, min first). */
  mode: 'exact' | 'range' | 'label';
  /** Float32 (or Int32 for 'label') little-endian, deflate-raw compressed, base64. */
  b64: string;
  /** For 'label' layers: text shown before the label value (e.g. 'depression #'); 0 = none. */
  prefix?: string;
}

export interface FigureBlock {
  svg: string;
  caption: string;
  /** Expected marker count (for tests and the caption). */
  markers: number;
}

export interface MapBlock extends FigureBlock {
  frame: Frame;
  geometry: MapGeometry;
  /** Layer toggles: id and label (ids match data-layer in the SVG). */
  toggles: { id: string; label: string; on: boolean }[];
  hover: HoverLayer[];
  /** Map x/y units for the pointer read-out. */
  xyUnit: string;
  /** The display raster interpolates scattered samples (no data cells to name). */
  interpolated?: boolean;
  geographic: boolean;
}

export interface ReportDoc {
  command: string;
  title: string;
  subtitle: string;
  domain: 'terrain' | 'energy';
  header: HeaderRow[];
  cautions: string[];
  map: MapBlock;
  tree: FigureBlock | null;
  /** Heading of the tree section (default: 'Merge tree'). */
  treeTitle?: string;
  persistence: FigureBlock | null;
  tables: TableSpec[];
  /** Tooltip rows per link key. */
  tips: Record<string, [string, string][]>;
  /** Short headline facts shown as chips under the title. */
  facts: string[];
  /** Method notes (display choices, what was left out). */
  notes: string[];
  /** Other files of the run (names relative to the report). */
  files: string[];
  version: string;
  generated: string;
}

export interface ReportContext {
  /** The command line that reproduces the run. */
  commandLine: string;
  /** Files written beside the report (for links). */
  files: string[];
  /** Timestamp shown in the footer (ISO); default now. */
  generated?: string;
  /** Unit of the surface values for labels, when known. */
  valueUnit?: string;
}

export interface BuiltReport {
  doc: ReportDoc;
  /** Standalone figures. */
  svgs: { map: string; tree: string | null; persistence: string | null };
}
