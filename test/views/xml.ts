/**
 * A small strict XML well-formedness checker and tree builder for the picture tests (no
 * dependency): one root element, every tag closed in order, attribute values quoted, no
 * duplicate attributes, only the five predefined entities and numeric references, no stray
 * '<' or '&'. Enough of XML 1.0 (W3C Recommendation, 5th ed., sections 2.1-2.8, 3.1, 4.1)
 * for what the service writes: no DTDs, no CDATA sections.
 */

export interface XmlElement {
  name: string;
  attrs: Record<string, string>;
  children: XmlElement[];
  text: string;
}

export class XmlError extends Error {
  override readonly name = 'XmlError';
}

const NAME = /^[A-Za-z_:][A-Za-z0-9._:-]*/;
const ENTITIES: Record<string, string> = { amp: '&', lt: '<', gt: '>', quot: '"', apos: "'" };

function decode(text: string, at: number): string {
  return text.replace(/&([^;]*);|&/g, (m, ref: string | undefined) => {
    if (ref === undefined) throw new XmlError(`bare '&' near offset ${at}`);
    if (ref in ENTITIES) return ENTITIES[ref]!;
    const num = /^#(\d+)$/.exec(ref) ?? null;
    if (num) return String.fromCodePoint(Number(num[1]));
    const hex = /^#x([0-9A-Fa-f]+)$/.exec(ref);
    if (hex) return String.fromCodePoint(parseInt(hex[1]!, 16));
    throw new XmlError(`unknown entity ${m} near offset ${at}`);
  });
}

/** Parses `source`; throws XmlError naming the offset of the first problem. */
export function parseXml(source: string): XmlElement {
  let i = 0;
  const stack: XmlElement[] = [];
  let root: XmlElement | null = null;
  const skipProlog = () => {
    if (source.startsWith('<?xml', i)) {
      const end = source.indexOf('?>', i);
      if (end < 0) throw new XmlError('unterminated XML declaration');
      i = end + 2;
    }
  };
  skipProlog();
  while (i < source.length) {
    const lt = source.indexOf('<', i);
    const textEnd = lt < 0 ? source.length : lt;
    const text = source.slice(i, textEnd);
    if (text.includes('>') && stack.length === 0 && text.trim() !== '') throw new XmlError(`text outside the root near offset ${i}`);
    if (stack.length > 0) stack[stack.length - 1]!.text += decode(text, i);
    else if (text.trim() !== '') throw new XmlError(`text outside the root near offset ${i}`);
    if (lt < 0) break;
    i = lt;
    if (source.startsWith('<!--', i)) {
      const end = source.indexOf('-->', i);
      if (end < 0) throw new XmlError(`unterminated comment at offset ${i}`);
      i = end + 3;
      continue;
    }
    if (source.startsWith('</', i)) {
      const m = NAME.exec(source.slice(i + 2));
      if (!m) throw new XmlError(`bad closing tag at offset ${i}`);
      const close = source.indexOf('>', i);
      if (close < 0 || source.slice(i + 2 + m[0].length, close).trim() !== '') throw new XmlError(`bad closing tag at offset ${i}`);
      const open = stack.pop();
      if (!open || open.name !== m[0]) throw new XmlError(`</${m[0]}> at offset ${i} closes <${open?.name ?? 'nothing'}>`);
      i = close + 1;
      continue;
    }
    if (source.startsWith('<!', i) || source.startsWith('<?', i)) throw new XmlError(`unsupported markup at offset ${i}`);
    const m = NAME.exec(source.slice(i + 1));
    if (!m) throw new XmlError(`bad tag at offset ${i}`);
    const element: XmlElement = { name: m[0], attrs: {}, children: [], text: '' };
    i += 1 + m[0].length;
    for (;;) {
      const ws = /^\s*/.exec(source.slice(i))![0].length;
      i += ws;
      if (source.startsWith('/>', i) || source[i] === '>') break;
      if (ws === 0) throw new XmlError(`expected whitespace before an attribute at offset ${i}`);
      const a = /^([A-Za-z_:][A-Za-z0-9._:-]*)\s*=\s*("([^"<]*)"|'([^'<]*)')/.exec(source.slice(i));
      if (!a) throw new XmlError(`bad attribute at offset ${i} in <${element.name}>`);
      if (a[1]! in element.attrs) throw new XmlError(`duplicate attribute ${a[1]} at offset ${i}`);
      element.attrs[a[1]!] = decode(a[3] ?? a[4] ?? '', i);
      i += a[0].length;
    }
    const selfClosing = source.startsWith('/>', i);
    i += selfClosing ? 2 : 1;
    if (stack.length > 0) stack[stack.length - 1]!.children.push(element);
    else if (root) throw new XmlError(`a second root element <${element.name}> at offset ${i}`);
    else root = element;
    if (!selfClosing) stack.push(element);
  }
  if (stack.length > 0) throw new XmlError(`<${stack[stack.length - 1]!.name}> is never closed`);
  if (!root) throw new XmlError('no root element');
  return root;
}

/** Every element below (and including) `node`, depth first. */
export function allElements(node: XmlElement): XmlElement[] {
  return [node, ...node.children.flatMap(allElements)];
}

/** Elements whose class list holds `cls`. */
export function byClass(node: XmlElement, cls: string): XmlElement[] {
  return allElements(node).filter((e) => (e.attrs['class'] ?? '').split(/\s+/).includes(cls));
}

/** All text below `node`. */
export function textOf(node: XmlElement): string {
  return node.text + node.children.map(textOf).join('');
}
