/**
 * A small, strict XML reader for the two XML documents GDAL keeps beside
 * pixels: the GDAL_METADATA tag and the `.aux.xml` sidecar. It builds an
 * element tree and refuses anything not well-formed (XML 1.0, W3C 2008:
 * one root element, matching end tags, quoted attributes, known entities),
 * so a truncated or garbled block is reported instead of half-read.
 * DTDs are not supported (GDAL writes none).
 */

export interface XmlElement {
  readonly name: string;
  readonly attrs: Readonly<Record<string, string>>;
  readonly children: readonly XmlElement[];
  /** Concatenated character data directly inside this element (entities resolved). */
  readonly text: string;
}

/** The document is not well-formed XML; the message says where and why. */
export class XmlSyntaxError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'XmlSyntaxError';
  }
}

const NAME = /^[A-Za-z_:][\w.:-]*/;
const ENTITIES: Record<string, string> = { amp: '&', lt: '<', gt: '>', quot: '"', apos: "'" };

function decodeEntities(raw: string, at: number): string {
  return raw.replace(/&([^;&\s]{0,32});|&/g, (m, ent: string | undefined) => {
    if (ent === undefined) throw new XmlSyntaxError(`a bare "&" near character ${at}`);
    if (ent in ENTITIES) return ENTITIES[ent];
    const code = /^#x[0-9a-fA-F]+$/.test(ent) ? parseInt(ent.slice(2), 16) : /^#[0-9]+$/.test(ent) ? parseInt(ent.slice(1), 10) : NaN;
    if (!(code > 0 && code <= 0x10ffff)) throw new XmlSyntaxError(`unknown entity "${m}" near character ${at}`);
    return String.fromCodePoint(code);
  });
}

/**
 * Parse a whole XML document.
 * @throws XmlSyntaxError when it is not well-formed
 * @example parseXml('<a x="1"><b>t</b></a>').children[0].text // 't'
 */
export function parseXml(text: string): XmlElement {
  let i = 0;
  const n = text.length;
  const stack: Array<{ name: string; attrs: Record<string, string>; children: XmlElement[]; text: string }> = [];
  let root: XmlElement | null = null;

  const skipMisc = (): boolean => {
    if (text.startsWith('<!--', i)) {
      const end = text.indexOf('-->', i + 4);
      if (end < 0) throw new XmlSyntaxError(`comment at character ${i} is not closed`);
      i = end + 3;
      return true;
    }
    if (text.startsWith('<?', i)) {
      const end = text.indexOf('?>', i + 2);
      if (end < 0) throw new XmlSyntaxError(`processing instruction at character ${i} is not closed`);
      i = end + 2;
      return true;
    }
    if (text.startsWith('<!DOCTYPE', i)) throw new XmlSyntaxError('document type declarations are not supported');
    return false;
  };

  while (i < n) {
    const lt = text.indexOf('<', i);
    const chunk = text.slice(i, lt < 0 ? n : lt);
    if (stack.length === 0) {
      if (chunk.trim() !== '') throw new XmlSyntaxError(`text outside the root element near character ${i}`);
    } else {
      stack[stack.length - 1].text += decodeEntities(chunk, i);
    }
    if (lt < 0) break;
    i = lt;
    if (skipMisc()) continue;
    if (text.startsWith('<![CDATA[', i)) {
      const end = text.indexOf(']]>', i + 9);
      if (end < 0 || stack.length === 0) throw new XmlSyntaxError(`CDATA section at character ${i} is not closed or lies outside the root`);
      stack[stack.length - 1].text += text.slice(i + 9, end);
      i = end + 3;
      continue;
    }
    if (text.startsWith('</', i)) {
      const m = NAME.exec(text.slice(i + 2));
      const open = stack.pop();
      if (!m || !open || m[0] !== open.name) {
        throw new XmlSyntaxError(`end tag at character ${i} does not close ${open ? `<${open.name}>` : 'any element'}`);
      }
      i += 2 + m[0].length;
      while (i < n && /\s/.test(text[i])) i++;
      if (text[i] !== '>') throw new XmlSyntaxError(`end tag </${open.name}> at character ${i} is not closed`);
      i++;
      const el: XmlElement = { name: open.name, attrs: open.attrs, children: open.children, text: open.text };
      if (stack.length) stack[stack.length - 1].children.push(el);
      else root = el;
      continue;
    }
    // start tag
    if (root !== null) throw new XmlSyntaxError(`a second root element at character ${i}`);
    const m = NAME.exec(text.slice(i + 1));
    if (!m) throw new XmlSyntaxError(`"<" at character ${i} does not start a tag`);
    const name = m[0];
    i += 1 + name.length;
    const attrs: Record<string, string> = {};
    for (;;) {
      const ws = i;
      while (i < n && /\s/.test(text[i])) i++;
      if (text.startsWith('/>', i) || text[i] === '>') break;
      if (i >= n) throw new XmlSyntaxError(`start tag <${name}> is not closed`);
      if (i === ws) throw new XmlSyntaxError(`attributes of <${name}> are not separated by white space near character ${i}`);
      const a = NAME.exec(text.slice(i));
      if (!a) throw new XmlSyntaxError(`bad attribute in <${name}> near character ${i}`);
      i += a[0].length;
      while (i < n && /\s/.test(text[i])) i++;
      if (text[i] !== '=') throw new XmlSyntaxError(`attribute ${a[0]} of <${name}> has no value`);
      i++;
      while (i < n && /\s/.test(text[i])) i++;
      const q = text[i];
      if (q !== '"' && q !== "'") throw new XmlSyntaxError(`attribute ${a[0]} of <${name}> is not quoted`);
      const end = text.indexOf(q, i + 1);
      if (end < 0) throw new XmlSyntaxError(`attribute ${a[0]} of <${name}> is not closed`);
      const raw = text.slice(i + 1, end);
      if (raw.includes('<')) throw new XmlSyntaxError(`attribute ${a[0]} of <${name}> holds "<"`);
      if (a[0] in attrs) throw new XmlSyntaxError(`attribute ${a[0]} repeated in <${name}>`);
      attrs[a[0]] = decodeEntities(raw, i);
      i = end + 1;
    }
    if (text.startsWith('/>', i)) {
      i += 2;
      const el: XmlElement = { name, attrs, children: [], text: '' };
      if (stack.length) stack[stack.length - 1].children.push(el);
      else root = el;
    } else {
      i++;
      stack.push({ name, attrs, children: [], text: '' });
    }
  }
  if (stack.length) throw new XmlSyntaxError(`the document ends inside <${stack[stack.length - 1].name}>`);
  if (root === null) throw new XmlSyntaxError('the document has no root element');
  return root;
}
