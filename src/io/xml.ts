/**
 * A small XML reader for the few-kilobyte files sill reads (GDAL VRT): elements, attributes,
 * text, comments, CDATA, the XML declaration, and the five predefined entities plus character
 * references. No DTDs, no namespaces (a prefix stays part of the name). Errors are one line with
 * the line number, as an InputError naming the file.
 */
import { InputError } from '../errors.js';

export interface XmlElement {
  name: string;
  attrs: Record<string, string>;
  children: XmlElement[];
  /** The element's own text (its text pieces joined, child elements left out). */
  text: string;
  /** 1-based line of its start tag, for messages. */
  line: number;
}

const ENTITIES: Record<string, string> = { amp: '&', lt: '<', gt: '>', quot: '"', apos: "'" };
const NAME = /[A-Za-z_:][-A-Za-z0-9_:.]*/y;

/** Parse `text` (the contents of `source`) into its root element. */
export function parseXml(text: string, source: string): XmlElement {
  let i = 0;
  const n = text.length;
  const lineAt = (k: number): number => {
    let line = 1;
    for (let j = 0; j < k && j < n; j++) if (text.charCodeAt(j) === 10) line++;
    return line;
  };
  const fail = (what: string, at = i): never => {
    throw new InputError(`${source} is not well-formed XML: ${what} at line ${lineAt(at)}; write it again (e.g. with gdalbuildvrt)`);
  };
  const decode = (s: string, at: number): string =>
    s.replace(/&(#x[0-9A-Fa-f]+|#[0-9]+|[A-Za-z]+);|&/g, (m, ref: string | undefined) => {
      if (ref === undefined) return fail('a bare & (write &amp;)', at);
      if (ref[0] === '#') {
        const code = ref[1] === 'x' ? parseInt(ref.slice(2), 16) : parseInt(ref.slice(1), 10);
        if (!(code > 0 && code <= 0x10ffff)) fail(`the character reference ${m}`, at);
        return String.fromCodePoint(code);
      }
      const e = ENTITIES[ref];
      if (e === undefined) fail(`the unknown entity ${m}`, at);
      return e;
    });
  const skipMisc = (): void => {
    for (;;) {
      while (i < n && /\s/.test(text[i])) i++;
      if (text.startsWith('<?', i)) {
        const end = text.indexOf('?>', i);
        if (end < 0) fail('an unclosed <?…?>');
        i = end + 2;
      } else if (text.startsWith('<!--', i)) {
        const end = text.indexOf('-->', i + 4);
        if (end < 0) fail('an unclosed comment');
        i = end + 3;
      } else if (text.startsWith('<!DOCTYPE', i)) {
        fail('a DOCTYPE (not supported)');
      } else return;
    }
  };
  const name = (): string => {
    NAME.lastIndex = i;
    const m = NAME.exec(text);
    if (!m) fail('a missing or bad name');
    i += m![0].length;
    return m![0];
  };
  const element = (depth: number): XmlElement => {
    if (depth > 64) fail('elements nested more than 64 deep');
    const start = i;
    if (text[i] !== '<') fail('text outside the root element');
    i++;
    const el: XmlElement = { name: name(), attrs: {}, children: [], text: '', line: lineAt(start) };
    for (;;) {
      const before = i;
      while (i < n && /\s/.test(text[i])) i++;
      if (text.startsWith('/>', i)) { i += 2; return el; }
      if (text[i] === '>') { i++; break; }
      if (i === before) fail(`a bad start tag <${el.name}>`);
      const a = name();
      while (i < n && /\s/.test(text[i])) i++;
      if (text[i] !== '=') fail(`attribute ${a} of <${el.name}> without a value`);
      i++;
      while (i < n && /\s/.test(text[i])) i++;
      const q = text[i];
      if (q !== '"' && q !== "'") fail(`attribute ${a} of <${el.name}> without quotes`);
      const end = text.indexOf(q, i + 1);
      if (end < 0) fail(`an unclosed attribute ${a} of <${el.name}>`);
      if (a in el.attrs) fail(`attribute ${a} given twice in <${el.name}>`);
      el.attrs[a] = decode(text.slice(i + 1, end), i);
      i = end + 1;
    }
    const parts: string[] = [];
    for (;;) {
      if (i >= n) fail(`<${el.name}> is not closed`, start);
      if (text.startsWith('</', i)) {
        i += 2;
        const closing = name();
        if (closing !== el.name) fail(`</${closing}> closes <${el.name}>`);
        while (i < n && /\s/.test(text[i])) i++;
        if (text[i] !== '>') fail(`a bad end tag </${closing}>`);
        i++;
        el.text = parts.join('');
        return el;
      }
      if (text.startsWith('<!--', i)) {
        const end = text.indexOf('-->', i + 4);
        if (end < 0) fail('an unclosed comment');
        i = end + 3;
      } else if (text.startsWith('<![CDATA[', i)) {
        const end = text.indexOf(']]>', i);
        if (end < 0) fail('an unclosed CDATA section');
        parts.push(text.slice(i + 9, end));
        i = end + 3;
      } else if (text.startsWith('<?', i)) {
        const end = text.indexOf('?>', i);
        if (end < 0) fail('an unclosed <?…?>');
        i = end + 2;
      } else if (text[i] === '<') {
        el.children.push(element(depth + 1));
      } else {
        const end = text.indexOf('<', i);
        const stop = end < 0 ? n : end;
        parts.push(decode(text.slice(i, stop), i));
        i = stop;
      }
    }
  };
  if (text.charCodeAt(0) === 0xfeff) i = 1;
  skipMisc();
  if (i >= n) fail('no element');
  const root = element(0);
  skipMisc();
  if (i < n) fail('content after the root element');
  return root;
}

/** Text with the five XML special characters escaped, for attributes and element text. */
export function xmlEscape(s: string): string {
  return s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&apos;' })[c]!);
}
