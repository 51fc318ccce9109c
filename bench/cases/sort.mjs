/** Reference: the engine's own numeric sort of the same values, as float64. */
import { timeIt, median } from '../lib/util.mjs';

export const sortCase = {
  name: 'sort',
  about: 'reference on its own: Float64Array.prototype.sort() on the terrain values copied into a Float64Array',
  async run(ctx) {
    const values = ctx.terrain();
    const ms = await timeIt((f) => f.sort(), { repeat: ctx.repeat, setup: () => Float64Array.from(values) });
    ctx.record('sort.ms', median(ms), { label: 'Float64Array sort (reference)', unit: 'ms', samples: ms, cpu: ms.cpu });
  },
};
