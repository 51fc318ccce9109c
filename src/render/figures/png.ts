/** A minimal PNG encoder (8-bit RGB or RGBA, "Sub" row filter, zlib from node) for the map layers. */
import { deflateSync } from 'node:zlib';

const CRC_TABLE = (() => {
  const t = new Uint32Array(256);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
    t[n] = c >>> 0;
  }
  return t;
})();

function crc32(buf: Uint8Array, start: number, end: number): number {
  let c = 0xffffffff;
  for (let i = start; i < end; i++) c = CRC_TABLE[(c ^ buf[i]) & 0xff] ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}

function chunk(type: string, data: Uint8Array): Uint8Array {
  const out = new Uint8Array(12 + data.length);
  const dv = new DataView(out.buffer);
  dv.setUint32(0, data.length);
  for (let k = 0; k < 4; k++) out[4 + k] = type.charCodeAt(k);
  out.set(data, 8);
  dv.setUint32(8 + data.length, crc32(out, 4, 8 + data.length));
  return out;
}

/** Encode `pixels` (row-major, `channels` bytes per pixel: 3 = RGB, 4 = RGBA) as a PNG file. */
export function encodePng(pixels: Uint8Array, width: number, height: number, channels: 3 | 4): Uint8Array {
  if (pixels.length !== width * height * channels) throw new RangeError(`PNG: expected ${width * height * channels} bytes, got ${pixels.length}`);
  const stride = width * channels;
  const raw = new Uint8Array((stride + 1) * height);
  for (let r = 0; r < height; r++) {
    const o = r * (stride + 1), s = r * stride;
    raw[o] = 1; // filter type 1: Sub
    for (let i = 0; i < stride; i++) raw[o + 1 + i] = (pixels[s + i] - (i >= channels ? pixels[s + i - channels] : 0)) & 0xff;
  }
  const ihdr = new Uint8Array(13);
  const dv = new DataView(ihdr.buffer);
  dv.setUint32(0, width);
  dv.setUint32(4, height);
  ihdr[8] = 8; // bit depth
  ihdr[9] = channels === 4 ? 6 : 2; // colour type: RGBA or RGB
  const idat = deflateSync(raw, { level: 6 });
  const parts = [
    new Uint8Array([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]),
    chunk('IHDR', ihdr), chunk('IDAT', idat), chunk('IEND', new Uint8Array(0)),
  ];
  const out = new Uint8Array(parts.reduce((n, p) => n + p.length, 0));
  let o = 0;
  for (const p of parts) { out.set(p, o); o += p.length; }
  return out;
}

export function pngDataUri(png: Uint8Array): string {
  return 'data:image/png;base64,' + Buffer.from(png.buffer, png.byteOffset, png.byteLength).toString('base64');
}
