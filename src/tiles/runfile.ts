/**
 * Stage files of a tiled run: a record of typed arrays and numbers in one file, so that a stage
 * can hand its result to the next through a run folder (a local pool or a cluster scheduler runs
 * the same stages). Layout: "SILLRUN1", the byte length of a JSON header (uint32, little-endian),
 * the header (field → [number as text], or [array type, element count, byte offset]), then each array's bytes
 * at its offset (8-byte aligned). Little-endian, as the typed arrays are on every platform Node runs on.
 */
import { readFile, writeFile, rename } from 'node:fs/promises';

type Typed = Int32Array | Uint8Array | Float64Array | Float32Array | Uint32Array;
const TYPES: Record<string, new (b: ArrayBuffer, o: number, n: number) => Typed> = {
  Int32Array, Uint8Array, Float64Array, Float32Array, Uint32Array,
};
const MAGIC = 'SILLRUN1';

/** Write `rec` (typed arrays and numbers) to `path`, through a temporary file renamed into place. */
export async function writeRunFile(path: string, rec: Record<string, unknown>): Promise<void> {
  const head: Record<string, [string] | [string, number, number]> = {};
  let off = 0;
  const arrays: [Typed, number][] = [];
  for (const [k, v] of Object.entries(rec)) {
    if (typeof v === 'number') { head[k] = [Object.is(v, -0) ? '-0' : String(v)]; continue; } // ±∞ and NaN survive as text
    if (!ArrayBuffer.isView(v) || !(v.constructor.name in TYPES)) throw new Error(`internal: run file field ${k} is neither a number nor a typed array`);
    const a = v as Typed;
    head[k] = [a.constructor.name, a.length, off];
    arrays.push([a, off]);
    off += Math.ceil(a.byteLength / 8) * 8;
  }
  const json = Buffer.from(JSON.stringify(head));
  const start = Math.ceil((12 + json.length) / 8) * 8;
  const buf = Buffer.alloc(start + off);
  buf.write(MAGIC, 0, 'latin1');
  buf.writeUInt32LE(json.length, 8);
  json.copy(buf, 12);
  for (const [a, o] of arrays) Buffer.from(a.buffer, a.byteOffset, a.byteLength).copy(buf, start + o);
  const tmp = `${path}.${process.pid}.tmp`;
  await writeFile(tmp, buf);
  await rename(tmp, path);
}

/** Read a file written by writeRunFile; the arrays are views of one buffer. */
export async function readRunFile<T>(path: string): Promise<T> {
  const b = await readFile(path);
  if (b.length < 12 || b.toString('latin1', 0, 8) !== MAGIC) throw new Error(`${path}: not a sill run file (damaged, or from another program)`);
  const n = b.readUInt32LE(8);
  const head = JSON.parse(b.toString('utf8', 12, 12 + n)) as Record<string, [string] | [string, number, number]>;
  const start = Math.ceil((12 + n) / 8) * 8;
  const ab = new ArrayBuffer(b.length - start);
  new Uint8Array(ab).set(b.subarray(start));
  const out: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(head)) {
    if (v.length === 1) { out[k] = Number(v[0]); continue; }
    const [type, len, off] = v as [string, number, number];
    const C = TYPES[type];
    if (!C) throw new Error(`${path}: unknown array type ${type}`);
    out[k] = new C(ab, off, len);
  }
  return out as T;
}
