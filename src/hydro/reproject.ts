/**
 * Reprojection of vector outputs to WGS84 longitude/latitude with proj4, for the projected
 * CRSs whose EPSG parameters sill carries. ETRS89 and NAD83 are taken as equal to WGS84 (a
 * null datum shift, the usual "ballpark" choice; the difference is at the metre level).
 */
import proj4 from 'proj4';
import { InputError } from '../errors.js';
import type { Crs } from '../surface/grid.js';

/** proj4 definition of an EPSG code sill can reproject, or null. */
export function projDefinition(epsg: number): string | null {
  if (epsg === 3857) return '+proj=merc +a=6378137 +b=6378137 +lat_ts=0 +lon_0=0 +x_0=0 +y_0=0 +k=1 +units=m +nadgrids=@null +no_defs';
  if (epsg >= 32601 && epsg <= 32660) return `+proj=utm +zone=${epsg - 32600} +datum=WGS84 +units=m +no_defs`;
  if (epsg >= 32701 && epsg <= 32760) return `+proj=utm +zone=${epsg - 32700} +south +datum=WGS84 +units=m +no_defs`;
  if (epsg >= 25828 && epsg <= 25838) return `+proj=utm +zone=${epsg - 25800} +ellps=GRS80 +towgs84=0,0,0,0,0,0,0 +units=m +no_defs`;
  if (epsg >= 26901 && epsg <= 26923) return `+proj=utm +zone=${epsg - 26900} +ellps=GRS80 +towgs84=0,0,0,0,0,0,0 +units=m +no_defs`;
  if (epsg === 3035) return '+proj=laea +lat_0=52 +lon_0=10 +x_0=4321000 +y_0=3210000 +ellps=GRS80 +towgs84=0,0,0,0,0,0,0 +units=m +no_defs';
  if (epsg === 2154) return '+proj=lcc +lat_0=46.5 +lon_0=3 +lat_1=49 +lat_2=44 +x_0=700000 +y_0=6600000 +ellps=GRS80 +towgs84=0,0,0,0,0,0,0 +units=m +no_defs';
  return null;
}

export const REPROJECTABLE = 'EPSG:4326, 3857, 32601–32660, 32701–32760 (WGS84 UTM), 25828–25838 (ETRS89 UTM), 26901–26923 (NAD83 UTM), 3035, 2154';

/** A function taking map (x, y) of the CRS to [longitude, latitude] on WGS84; InputError when sill cannot. */
export function toWgs84(crs: Crs | null, source = 'input'): (x: number, y: number) => [number, number] {
  if (!crs || crs.epsg === undefined) {
    throw new InputError(`--wgs84 needs a CRS with an EPSG code, and ${source} has ${crs ? 'a CRS without one' : 'no CRS'}; drop --wgs84 or assign a CRS to the DEM`);
  }
  if (crs.geographic) {
    if (crs.epsg === 4326) return (x, y) => [x, y];
    throw new InputError(`--wgs84: the geographic CRS EPSG:${crs.epsg} is not WGS84 and sill does not shift datums; drop --wgs84 (the outputs are already in degrees)`);
  }
  const def = projDefinition(crs.epsg);
  if (def === null) {
    throw new InputError(`--wgs84: sill cannot reproject EPSG:${crs.epsg} (it knows ${REPROJECTABLE}); drop --wgs84 and reproject the GeoJSON in your GIS`);
  }
  const conv = proj4(def, 'EPSG:4326');
  return (x, y) => {
    const p = conv.forward([x, y]);
    return [p[0], p[1]];
  };
}
