export { readGeoTiff, type GeoTiffReadOptions } from './geotiff-read.js';
export { writeGeoTiff, type RasterToWrite, type RasterValues, type GeoTiffWriteOptions } from './geotiff-write.js';
export { parseTextSurface, readTextSurface, LATTICE_TOLERANCE, LATTICE_MAX_FILL, type TextSurfaceOptions } from './text.js';
export { readNpy, type NpyReadOptions } from './npy.js';
export { loadSurface, detectFormat, type LoadOptions, type SurfaceFormat } from './load.js';
export { checkGridUsable } from './validate.js';
export { readGeoTiffInfo, readGeoTiffWindow, type GeoTiffInfo } from './geotiff-read.js';
export { openMosaic, isMosaicInput, PLACEMENT_TOLERANCE, type MosaicOptions, type OpenedMosaic, type MosaicKind } from './mosaic.js';
export { vrtText, type VrtLayer, type VrtSource } from './vrt-write.js';
