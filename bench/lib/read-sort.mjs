/**
 * The floor under the hydrology commands, as a whole process: read a GeoTIFF the way sill does
 * (loadSurface) and sort its values once (the radix sort of src/morse/order.ts).
 *
 *   node bench/lib/read-sort.mjs T.tif [DIST]
 */
import { join } from 'node:path';
import { pathToFileURL, fileURLToPath } from 'node:url';

const [file, distArg] = process.argv.slice(2);
const dist = distArg ?? join(fileURLToPath(new URL('.', import.meta.url)), '..', '..', 'dist');
const { loadSurface } = await import(pathToFileURL(join(dist, 'io', 'index.js')).href);
const { sortOrder } = await import(pathToFileURL(join(dist, 'morse', 'order.js')).href);
const g = await loadSurface(file);
const order = sortOrder(g.values);
if (order.length === 0) process.exitCode = 1;
