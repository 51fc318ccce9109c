/** Small helpers for writing SVG and HTML text. */

/** Escape text for XML/HTML content and attribute values. */
export function esc(s: string | number): string {
  return String(s).replace(/[&<>"']/g, (ch) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[ch]!);
}

/** A coordinate with at most `d` decimals and no trailing zeros. */
export function n(v: number, d = 2): string {
  const p = 10 ** d;
  const r = Math.round(v * p) / p;
  return Object.is(r, -0) ? '0' : String(r);
}

/** Attributes from a record (undefined/null/false skipped; true → the bare name). */
export function attrs(a: Record<string, string | number | boolean | null | undefined>): string {
  let s = '';
  for (const [k, v] of Object.entries(a)) {
    if (v === undefined || v === null || v === false) continue;
    s += v === true ? ` ${k}` : ` ${k}="${esc(v)}"`;
  }
  return s;
}

export function el(name: string, a: Record<string, string | number | boolean | null | undefined>, inner?: string): string {
  return inner === undefined ? `<${name}${attrs(a)}/>` : `<${name}${attrs(a)}>${inner}</${name}>`;
}

/** Accessible title and description of a figure (read by screen readers and shown by viewers). */
export function titleDesc(id: string, title: string, desc: string): string {
  return `<title id="${esc(id)}-title">${esc(title)}</title><desc id="${esc(id)}-desc">${esc(desc)}</desc>`;
}

/** Break text into lines of at most `max` characters at spaces (SVG text does not wrap). */
export function wrapText(s: string, max: number): string[] {
  const out: string[] = [];
  let line = '';
  for (const word of s.split(' ')) {
    if (line && line.length + 1 + word.length > max) { out.push(line); line = word; } else line = line ? `${line} ${word}` : word;
  }
  if (line) out.push(line);
  return out;
}
