/**
 * Invented demo data (our own scenario, generated procedurally with a fixed seed):
 *  - "Larkmoor upland": a gently tilted glacial upland, 5 m cells, with kettle-hole ponds,
 *    a valley dammed by a road embankment, and rough ground from fractal noise;
 *  - "dihedral scan": an energy surface over two periodic torsion angles with three wells.
 */
import { Grid, type GeoTransform } from '../surface/grid.js';

/** Deterministic pseudo-random numbers (mulberry32). */
export function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Smooth value noise summed over octaves, in [-1, 1] roughly; one lattice table per octave. */
export function fractalNoise(width: number, height: number, seed: number, baseCells: number, octaves: number, gain = 0.5): Float32Array {
  const out = new Float32Array(width * height);
  const rand = rng(seed);
  let amp = 1, cells = baseCells;
  for (let o = 0; o < octaves; o++) {
    const gw = Math.ceil(width / cells) + 2, gh = Math.ceil(height / cells) + 2;
    const lattice = new Float32Array(gw * gh);
    for (let i = 0; i < lattice.length; i++) lattice[i] = rand() * 2 - 1;
    for (let r = 0; r < height; r++) {
      const fy = r / cells, y0 = Math.floor(fy), ty = fy - y0, sy = ty * ty * (3 - 2 * ty);
      for (let c = 0; c < width; c++) {
        const fx = c / cells, x0 = Math.floor(fx), tx = fx - x0, sx = tx * tx * (3 - 2 * tx);
        const a = lattice[y0 * gw + x0], b = lattice[y0 * gw + x0 + 1];
        const d = lattice[(y0 + 1) * gw + x0], e = lattice[(y0 + 1) * gw + x0 + 1];
        out[r * width + c] += amp * ((a + (b - a) * sx) * (1 - sy) + (d + (e - d) * sx) * sy);
      }
    }
    amp *= gain;
    cells = Math.max(1, cells / 2);
  }
  return out;
}

export interface DemoDem {
  grid: Grid;
  description: string;
}

/** The Larkmoor upland DEM: 320 × 240 cells of 5 m in UTM zone 33N (EPSG:32633). */
export function larkmoorDem(width = 320, height = 240): DemoDem {
  const cell = 5;
  const noise = fractalNoise(width, height, 20261201, 64, 5);
  const values = new Float32Array(width * height);
  // kettle holes: centre (col, row), radius in cells, depth in m
  const kettles: [number, number, number, number][] = [
    [70, 60, 14, 3.2], [112, 84, 9, 2.1], [95, 150, 18, 4.0], [200, 52, 11, 2.6], [230, 170, 16, 3.5], [168, 120, 7, 1.6],
  ];
  const valleyRow = (c: number) => 190 - 0.25 * c + 10 * Math.sin(c / 40);
  for (let r = 0; r < height; r++) {
    for (let c = 0; c < width; c++) {
      let z = 240 + 0.04 * (width - c) * cell / 5 + 0.02 * r; // tilt toward the east edge
      z += 1.2 * noise[r * width + c];
      // valley running west→east toward the edge
      const dv = r - valleyRow(c);
      z -= 6 * Math.exp(-(dv * dv) / (2 * 14 * 14));
      for (const [kc, kr, rad, depth] of kettles) {
        const d2 = ((c - kc) ** 2 + (r - kr) ** 2) / (rad * rad);
        if (d2 < 4) z -= depth * Math.exp(-d2 * 1.6);
      }
      // road embankment across the valley at col 250: 3 m above the ground line
      if (Math.abs(c - 250) <= 2 && Math.abs(dv) < 40) z = Math.max(z, 240 + 0.04 * (width - 250) + 0.02 * r + 1.5);
      values[r * width + c] = Math.round(z * 100) / 100; // centimetre resolution, as lidar products often are
    }
  }
  const transform: GeoTransform = [512000, cell, 0, 5874000, 0, -cell];
  return {
    grid: new Grid({ width, height, values, transform, crs: { epsg: 32633, name: 'EPSG:32633', geographic: false, linearUnit: 'metre' }, nodata: -9999 }),
    description: 'Larkmoor upland (invented): tilted glacial upland with kettle ponds and a valley dammed by a road embankment; 5 m cells, EPSG:32633',
  };
}

/**
 * The culvert under the Larkmoor valley road (invented): a pipe through the embankment at column 250
 * along the valley floor (row 127), from 4 cells upstream to 4 downstream; no invert given, so it
 * runs at the lower (downstream) end's elevation. CSV for `sill ponds --culverts`.
 */
export function larkmoorCulverts(): string {
  const x = (c: number) => 512000 + (c + 0.5) * 5, y = (r: number) => 5874000 - (r + 0.5) * 5;
  return `name,x1,y1,x2,y2,invert\nvalley road culvert,${x(246)},${y(127)},${x(254)},${y(127)},\n`;
}

/**
 * An invented torsional energy surface E(φ, ψ) in kJ/mol over φ, ψ ∈ [−180°, 180°), periodic in
 * both angles, with three wells of different depth. Returns "phi psi energy" text.
 */
const DIHEDRAL_WELLS: [number, number, number, number][] = [
  // φ0, ψ0, depth, width (degrees)
  [-70, 140, 22, 38], [-75, -40, 18, 32], [60, 40, 12, 30],
];

/** The invented torsional energy E(φ, ψ) in kJ/mol (angles in degrees; periodic in both). */
export function dihedralEnergy(phi: number, psi: number): number {
  const rad = Math.PI / 180;
  let e = 6 * (1 + Math.cos(phi * rad)) + 4 * (1 + Math.cos(2 * psi * rad + 0.5)) + 3 * (1 - Math.cos((phi - psi) * rad));
  for (const [p0, q0, depth, w] of DIHEDRAL_WELLS) {
    // periodic distance on the torus through the cosine of the angle difference
    const dp = 1 - Math.cos((phi - p0) * rad), dq = 1 - Math.cos((psi - q0) * rad);
    const s2 = (w * rad) ** 2;
    e -= depth * Math.exp(-(dp + dq) / s2);
  }
  return e;
}

export function dihedralScan(step = 5): { text: string; description: string } {
  const lines = ['# invented demo: torsional scan, energies in kJ/mol, angles in degrees', 'phi psi energy'];
  for (let psi = -180; psi < 180; psi += step) {
    for (let phi = -180; phi < 180; phi += step) lines.push(`${phi} ${psi} ${dihedralEnergy(phi, psi).toFixed(4)}`);
  }
  return { text: lines.join('\n') + '\n', description: 'torsional scan (invented): E(φ, ψ) in kJ/mol on a 5° periodic grid' };
}

/**
 * Invented frames of a simulation on the same torsional surface: (φ, ψ) every 10th step of a seeded
 * Metropolis chain at 300 K (trial steps of ±15° normal per angle, angles wrapped into [−180, 180)).
 */
export function dihedralFrames(frames = 40000, seed = 300): { text: string; description: string } {
  const rand = rng(seed);
  const kT = 0.0083144626 * 300; // kJ/mol
  const wrap = (a: number) => a - 360 * Math.floor((a + 180) / 360);
  let phi = -75, psi = -40, e = dihedralEnergy(phi, psi);
  const lines = ['# invented demo: frames of a simulation of the torsional surface at 300 K, angles in degrees', 'phi psi'];
  for (let f = 0; f < frames; f++) {
    for (let s = 0; s < 10; s++) {
      const r = 15 * Math.sqrt(-2 * Math.log(1 - rand())), t = 2 * Math.PI * rand();
      const np = wrap(phi + r * Math.cos(t)), nq = wrap(psi + r * Math.sin(t));
      const ne = dihedralEnergy(np, nq);
      if (ne <= e || rand() < Math.exp((e - ne) / kT)) { phi = np; psi = nq; e = ne; }
    }
    lines.push(`${phi.toFixed(3)} ${psi.toFixed(3)}`);
  }
  return { text: lines.join('\n') + '\n', description: `dihedral frames (invented): ${frames} frames of (φ, ψ) from a Metropolis chain on the torsional surface at 300 K` };
}

/**
 * An invented three-variable free-energy landscape for the demo: two dihedral angles φ, ψ (degrees,
 * periodic) and a distance r (Å, not periodic) on a 15° × 15° × 0.25 Å lattice. Three states: a
 * compact one at short r, and two extended ones at longer r that differ in ψ; the distance couples
 * to φ, so the paths between the states bend through all three variables. Returns
 * "phi psi r energy" text (kJ/mol).
 */
export function torsionDistanceLandscape(step = 15, dr = 0.25): { text: string; description: string } {
  const lines = ['# invented demo: free energy over two dihedrals and a distance, kJ/mol; angles in degrees, r in angstrom', 'phi psi r energy'];
  const rad = Math.PI / 180;
  const states: [number, number, number, number, number, number][] = [
    // φ0, ψ0, r0, depth, angular width (degrees), radial width (Å)
    [-65, -45, 4.5, 24, 40, 0.55], [-120, 130, 6.5, 20, 45, 0.7], [60, 140, 6.25, 14, 35, 0.6],
  ];
  for (let r = 3.5; r <= 7.5 + 1e-9; r += dr) {
    for (let psi = -180; psi < 180; psi += step) {
      for (let phi = -180; phi < 180; phi += step) {
        // a confining wall in r, a torsional background, and r drawn out as φ opens
        let e = 3 * (r - 5.5) ** 2 + 5 * (1 + Math.cos(phi * rad)) + 3 * (1 + Math.cos(2 * psi * rad)) + 2 * (r - 5.5) * Math.sin(phi * rad);
        for (const [p0, q0, r0, depth, w, wr] of states) {
          const dp = 1 - Math.cos((phi - p0) * rad), dq = 1 - Math.cos((psi - q0) * rad);
          e -= depth * Math.exp(-(dp + dq) / (w * rad) ** 2 - ((r - r0) / wr) ** 2 / 2);
        }
        lines.push(`${phi} ${psi} ${r.toFixed(2)} ${e.toFixed(4)}`);
      }
    }
  }
  return { text: lines.join('\n') + '\n', description: 'free-energy landscape (invented): F(φ, ψ, r) in kJ/mol, 15° periodic dihedrals × 0.25 Å distance' };
}
