/**
 * Some top-level members of a JSON object file, read without holding the file: a report.json of a
 * run with a million depressions is hundreds of megabytes, and the batch catalogue needs only its
 * small members (surface, euler, counts, totals). The file is scanned in 1 MiB chunks; the values of
 * the wanted keys are kept and parsed, all others skipped by bracket depth. The scan stops as soon
 * as every wanted key has been seen.
 */
import { closeSync, openSync, readSync } from 'node:fs';

const CHUNK = 1 << 20;
/** A wanted value larger than this is refused (the catalogue's are a few hundred bytes). */
const MAX_VALUE = 16 << 20;

const WS = (c: number) => c === 0x20 || c === 0x0a || c === 0x0d || c === 0x09;

/**
 * The top-level members `keys` of the JSON object in `path` (absent keys are left out). Throws on
 * text that is not a JSON object. `chunkBytes` is the read size (small values for the tests).
 */
export function readJsonMembers(path: string, keys: readonly string[], chunkBytes = CHUNK): Record<string, unknown> {
  const want = new Set(keys);
  const out: Record<string, unknown> = {};
  const fd = openSync(path, 'r');
  const buf = Buffer.alloc(Math.max(1, chunkBytes));
  let len = 0, pos = 0, fileAt = 0;
  const more = (): boolean => {
    len = readSync(fd, buf, 0, buf.length, fileAt);
    fileAt += len;
    pos = 0;
    return len > 0;
  };
  const bad = (what: string) => new Error(`${path} is not a JSON object (${what})`);
  /** Next byte that is not white space (consumed), or -1 at the end. */
  const next = (): number => {
    for (;;) {
      while (pos < len) {
        const c = buf[pos++];
        if (!WS(c)) return c;
      }
      if (!more()) return -1;
    }
  };
  /**
   * Read the value that starts with byte `first` (already consumed). Returns its text when `keep`,
   * else ''. Strings, objects and arrays are followed to their end; numbers and literals end at a
   * delimiter, which is left unread.
   */
  const value = (first: number, keep: boolean): string => {
    const parts: Buffer[] = [];
    let kept = 0;
    let start = pos - 1;
    const flush = (end: number) => {
      if (keep && end > start) {
        kept += end - start;
        if (kept > MAX_VALUE) throw bad('a wanted member is too large');
        parts.push(Buffer.from(buf.subarray(start, end)));
      }
    };
    let depth = first === 0x7b || first === 0x5b ? 1 : 0;
    let inString = first === 0x22, escaped = false;
    const scalar = depth === 0 && !inString;
    for (;;) {
      if (pos >= len) {
        flush(len);
        if (!more()) {
          if (scalar) break;
          throw bad('cut short');
        }
        start = 0;
      }
      const c = buf[pos];
      if (scalar) {
        if (c === 0x2c || c === 0x7d || c === 0x5d || WS(c)) break;
        pos++;
        continue;
      }
      pos++;
      if (inString) {
        if (escaped) escaped = false;
        else if (c === 0x5c) escaped = true;
        else if (c === 0x22) {
          inString = false;
          if (depth === 0) break;
        }
      } else if (c === 0x22) inString = true;
      else if (c === 0x7b || c === 0x5b) depth++;
      else if (c === 0x7d || c === 0x5d) {
        if (--depth === 0) break;
      }
    }
    flush(pos);
    return keep ? Buffer.concat(parts).toString('utf8') : '';
  };
  try {
    more();
    if (next() !== 0x7b) throw bad('it does not start with {');
    let c = next();
    if (c === 0x7d) return out;
    for (;;) {
      if (c !== 0x22) throw bad('a member name was expected');
      const key = JSON.parse(value(c, true)) as string;
      if (next() !== 0x3a) throw bad('a colon was expected');
      const first = next();
      if (first < 0) throw bad('cut short');
      const keep = want.has(key);
      const text = value(first, keep);
      if (keep) {
        out[key] = JSON.parse(text);
        want.delete(key);
        if (want.size === 0) return out;
      }
      c = next();
      if (c === 0x7d) return out;
      if (c !== 0x2c) throw bad('a comma was expected');
      c = next();
    }
  } finally {
    closeSync(fd);
  }
}
