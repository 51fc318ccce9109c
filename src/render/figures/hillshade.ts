/**
 * Analytic hillshading as commonly practised in terrain cartography: the surface gradient by
 * Horn's 3 × 3 finite differences, then the illumination of a Lambertian surface by a distant
 * sun at a given azimuth and altitude,
 *
 *   shade = cos(zenith)·cos(slope) + sin(zenith)·sin(slope)·cos(azimuth − aspect),
 *
 * clamped at 0 for slopes turned away from the sun. Columns run east; rows run south when the
 * grid is north-up (`rowsSouth`), north otherwise.
 */

export interface HillshadeOptions {
  /** Sun azimuth in degrees clockwise from north (default 315: north-west). */
  azimuth?: number;
  /** Sun altitude above the horizon in degrees (default 45). */
  altitude?: number;
  /** Vertical exaggeration (default 1). */
  zFactor?: number;
  /** Rows increase southward (true for north-up rasters, default). */
  rowsSouth?: boolean;
}

const RAD = Math.PI / 180;

/** Shade of one planar facet with gradient (∂z/∂east, ∂z/∂north). */
export function shadeOfGradient(dzdx: number, dzdy: number, azimuthDeg = 315, altitudeDeg = 45): number {
  const zenith = (90 - altitudeDeg) * RAD, az = azimuthDeg * RAD;
  const g = Math.hypot(dzdx, dzdy);
  const slope = Math.atan(g);
  // aspect: azimuth (clockwise from north) of the downhill direction −∇z
  const aspect = g === 0 ? 0 : Math.atan2(-dzdx, -dzdy);
  const s = Math.cos(zenith) * Math.cos(slope) + Math.sin(zenith) * Math.sin(slope) * Math.cos(az - aspect);
  return s > 0 ? s : 0;
}

/**
 * Shade in [0, 1] for every cell (NaN where the cell is nodata). Nodata neighbours and cells
 * beyond the edge take the centre cell's value, so edges and holes shade as flat continuations.
 */
export function hillshade(z: ArrayLike<number>, width: number, height: number, dx: number, dy: number, opts: HillshadeOptions = {}): Float32Array {
  const az = opts.azimuth ?? 315, alt = opts.altitude ?? 45, zf = opts.zFactor ?? 1;
  const ns = (opts.rowsSouth ?? true) ? 1 : -1;
  const out = new Float32Array(width * height);
  const zenith = (90 - alt) * RAD, azr = az * RAD;
  const cz = Math.cos(zenith), sz = Math.sin(zenith);
  const at = (c: number, r: number, centre: number): number => {
    if (c < 0 || r < 0 || c >= width || r >= height) return centre;
    const v = z[r * width + c];
    return v === v ? v : centre;
  };
  for (let r = 0; r < height; r++) {
    for (let c = 0; c < width; c++) {
      const e = z[r * width + c];
      if (e !== e) { out[r * width + c] = NaN; continue; }
      const a = at(c - 1, r - 1, e), b = at(c, r - 1, e), cc = at(c + 1, r - 1, e);
      const d = at(c - 1, r, e), f = at(c + 1, r, e);
      const g = at(c - 1, r + 1, e), h = at(c, r + 1, e), i = at(c + 1, r + 1, e);
      const dzdx = (zf * ((cc + 2 * f + i) - (a + 2 * d + g))) / (8 * dx);
      // row r−1 is north of row r when rows run south
      const dzdy = (ns * zf * ((a + 2 * b + cc) - (g + 2 * h + i))) / (8 * dy);
      const gm = Math.hypot(dzdx, dzdy);
      const slope = Math.atan(gm);
      const aspect = gm === 0 ? 0 : Math.atan2(-dzdx, -dzdy);
      const s = cz * Math.cos(slope) + sz * Math.sin(slope) * Math.cos(azr - aspect);
      out[r * width + c] = s > 0 ? s : 0;
    }
  }
  return out;
}

/**
 * A vertical exaggeration that makes relief readable: chosen so that the 90th percentile of the
 * slopes is about `targetDeg` degrees, between 1 and `maxFactor`. Reported in the legend.
 */
export function autoZFactor(z: ArrayLike<number>, width: number, height: number, dx: number, dy: number, targetDeg = 20, maxFactor = 20): number {
  const step = Math.max(1, Math.floor(Math.sqrt((width * height) / 20000)));
  const g: number[] = [];
  for (let r = 1; r < height - 1; r += step) {
    for (let c = 1; c < width - 1; c += step) {
      const e = z[r * width + c], fx = z[r * width + c + 1], fy = z[(r + 1) * width + c];
      if (e !== e || fx !== fx || fy !== fy) continue;
      g.push(Math.hypot((fx - e) / dx, (fy - e) / dy));
    }
  }
  if (g.length === 0) return 1;
  g.sort((a, b) => a - b);
  const p90 = g[Math.floor(0.9 * (g.length - 1))];
  if (!(p90 > 0)) return 1;
  const f = Math.tan(targetDeg * RAD) / p90;
  return Math.max(1, Math.min(maxFactor, Number(f.toPrecision(2))));
}
