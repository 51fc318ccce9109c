/**
 * Stage–volume table of one depression: for water levels h from its pit to its spill level,
 * the wet area A(h) = Σ_{z<h} a and the volume V(h) = Σ_{z<h} a·(h − z) over its cells (nested
 * depressions included). V is piecewise linear in h between cell elevations, with slope A(h).
 * Below the spill level of a nested depression the table assumes one water level over the
 * whole depression (the nested pools level with each other).
 */
import { InputError } from '../errors.js';
import type { PondsResult } from './ponds.js';

export interface StageRow {
  level: number;
  cells: number;
  area: number;
  volume: number;
}

export function stageVolume(res: PondsResult, id: number, step?: number): StageRow[] {
  const H = res.hierarchy;
  if (!Number.isInteger(id) || id < 1 || id > H.count) {
    throw new InputError(`--stage-volume ${id}: there are ${H.count} depressions (ids 1…${H.count}); pick one from depressions.csv`);
  }
  const { labels } = res.rasters;
  const values = res.grid.values, W = res.grid.width;
  const rowArea = res.areas.rowArea;
  const lo = H.tin[id], hi = H.tout[id];
  const inside = (d: number) => d > 0 && H.tin[d] >= lo && H.tin[d] < hi;
  let m = 0;
  for (let i = 0; i < labels.length; i++) if (inside(labels[i])) m++;
  const zs = new Float64Array(m), as = new Float64Array(m);
  for (let i = 0, k = 0; i < labels.length; i++) if (inside(labels[i])) { zs[k] = values[i]; as[k++] = rowArea[(i / W) | 0]; }
  const idx = new Uint32Array(m);
  for (let k = 0; k < m; k++) idx[k] = k;
  idx.sort((a, b) => zs[a] - zs[b]);
  const pit = H.pitValue[id], spill = H.spillValue[id];
  const dz = step ?? (spill - pit) / 50;
  if (!(dz > 0)) throw new InputError(`--stage-step must be greater than 0, got ${step}`);
  const steps = Math.ceil((spill - pit) / dz - 1e-9);
  if (steps > 100000) throw new InputError(`--stage-step ${dz} gives ${steps} rows from ${pit} to ${spill}; choose a step of at least ${(spill - pit) / 100000}`);
  const rows: StageRow[] = [];
  let p = 0, A = 0, AZ = 0, N = 0;
  const zf = res.areas.zFactor;
  for (let k = 0; k <= steps; k++) {
    const h = k === steps ? spill : pit + k * dz;
    while (p < idx.length && zs[idx[p]] < h) { const q = idx[p++]; A += as[q]; AZ += as[q] * (zs[q] - pit); N++; }
    rows.push({ level: h, cells: N, area: A, volume: Math.max(0, ((h - pit) * A - AZ) * zf) });
  }
  return rows;
}
