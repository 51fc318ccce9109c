/**
 * A GDAL VRT that stitches per-tile GeoTIFFs into one layer: a `VRTDataset` with one
 * `VRTRasterBand` whose `SimpleSource`s place each tile whole (SrcRect = the tile, DstRect = its
 * cells in the mosaic), paths relative to the VRT. The elements are those of GDAL's VRT format
 * (https://gdal.org/drivers/raster/vrt.html); the text is small (one source a tile).
 */
import type { Crs, GeoTransform } from '../surface/grid.js';
import { xmlEscape } from './xml.js';

export interface VrtSource {
  /** Path of the tile relative to the VRT's folder, with '/' separators. */
  file: string;
  col0: number;
  row0: number;
  width: number;
  height: number;
}

export interface VrtLayer {
  width: number;
  height: number;
  transform: GeoTransform;
  crs: Crs | null;
  /** GDAL's name of the band type: Float32, Float64, Int32, … */
  dataType: string;
  nodata: number | null;
  sources: VrtSource[];
}

/** A number as GDAL writes it in a VRT: shortest round-trip decimal, 'nan', 'inf', '-inf'. */
function vrtNumber(x: number): string {
  if (Number.isNaN(x)) return 'nan';
  if (x === Infinity) return 'inf';
  if (x === -Infinity) return '-inf';
  return String(x);
}

/** The SRS element's text: EPSG:n (GDAL reads it as user input), or a WKT the tiles carried, or none. */
function srsText(crs: Crs | null): string | null {
  if (!crs) return null;
  if (crs.epsg) return `EPSG:${crs.epsg}`;
  if (crs.name && /^(PROJCS|GEOGCS|PROJCRS|GEOGCRS|GEODCRS|COMPD_CS|COMPOUNDCRS)\[/.test(crs.name)) return crs.name;
  return null;
}

/** The VRT text of one layer. */
export function vrtText(layer: VrtLayer): string {
  const lines = [`<VRTDataset rasterXSize="${layer.width}" rasterYSize="${layer.height}">`];
  const srs = srsText(layer.crs);
  if (srs) lines.push(`  <SRS>${xmlEscape(srs)}</SRS>`);
  lines.push(`  <GeoTransform>${layer.transform.map(vrtNumber).join(', ')}</GeoTransform>`);
  lines.push(`  <VRTRasterBand dataType="${layer.dataType}" band="1">`);
  if (layer.nodata !== null) lines.push(`    <NoDataValue>${vrtNumber(layer.nodata)}</NoDataValue>`);
  for (const s of layer.sources) {
    lines.push(
      '    <SimpleSource>',
      `      <SourceFilename relativeToVRT="1">${xmlEscape(s.file)}</SourceFilename>`,
      '      <SourceBand>1</SourceBand>',
      `      <SrcRect xOff="0" yOff="0" xSize="${s.width}" ySize="${s.height}" />`,
      `      <DstRect xOff="${s.col0}" yOff="${s.row0}" xSize="${s.width}" ySize="${s.height}" />`,
      '    </SimpleSource>',
    );
  }
  lines.push('  </VRTRasterBand>', '</VRTDataset>', '');
  return lines.join('\n');
}
