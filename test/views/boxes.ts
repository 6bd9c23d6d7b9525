import { boxesOverlap, textBox, type Box } from '../../src/views/layout.js';
import { allElements, textOf, type XmlElement } from './xml.js';

/**
 * The boxes of a parsed picture's text elements as the server estimates them (font size,
 * anchor, weight from the attributes, inherited from the nearest ancestor that sets them).
 * A check of the placement logic only: the browser test measures the drawn text.
 */
export function estimatedTextBoxes(root: XmlElement): { text: string; box: Box }[] {
  const out: { text: string; box: Box }[] = [];
  const walk = (node: XmlElement, inherited: { size: number; anchor: string; bold: boolean }) => {
    const size = node.attrs['font-size'] ? Number(node.attrs['font-size']) : inherited.size;
    const anchor = node.attrs['text-anchor'] ?? inherited.anchor;
    const bold = node.attrs['font-weight'] ? node.attrs['font-weight'] === 'bold' : inherited.bold;
    if (node.name === 'text') {
      const text = textOf(node);
      out.push({ text, box: textBox(text, Number(node.attrs['x']), Number(node.attrs['y']), size, anchor as 'start' | 'middle' | 'end', bold) });
      return;
    }
    for (const child of node.children) walk(child, { size, anchor, bold });
  };
  walk(root, { size: 12, anchor: 'start', bold: false });
  return out;
}

/** Pairs of text elements whose estimated boxes overlap. */
export function overlappingLabels(root: XmlElement): string[] {
  const boxes = estimatedTextBoxes(root).filter((b) => b.text.trim() !== '');
  const bad: string[] = [];
  for (let i = 0; i < boxes.length; i++) {
    for (let j = i + 1; j < boxes.length; j++) {
      if (boxesOverlap(boxes[i]!.box, boxes[j]!.box)) bad.push(`"${boxes[i]!.text}" and "${boxes[j]!.text}"`);
    }
  }
  return bad;
}

/** Elements with a given attribute. */
export function withAttr(root: XmlElement, name: string): XmlElement[] {
  return allElements(root).filter((e) => name in e.attrs);
}
