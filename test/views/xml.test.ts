import { describe, expect, it } from 'vitest';
import { byClass, parseXml, XmlError } from './xml.js';

// The checker the picture tests rely on must itself refuse what XML 1.0 forbids (W3C XML 1.0, 5th ed.).
describe('the test XML checker', () => {
  it('reads a small well-formed document with entities and self-closing tags', () => {
    const root = parseXml('<?xml version="1.0"?>\n<svg a="1 &amp; 2"><g class="x y"><line/></g><text>&lt;3&#176;</text></svg>');
    expect(root.name).toBe('svg');
    expect(root.attrs['a']).toBe('1 & 2');
    expect(byClass(root, 'y')).toHaveLength(1);
    expect(root.children[1]!.text).toBe('<3°');
  });

  it.each([
    ['an unclosed element', '<svg><g></svg>'],
    ['a crossed close', '<svg><g><a></g></a></svg>'],
    ['an unquoted attribute', '<svg a=1></svg>'],
    ['a duplicate attribute', '<svg a="1" a="2"></svg>'],
    ['a bare ampersand', '<svg>R&D</svg>'],
    ['an unknown entity', '<svg>&nbsp;</svg>'],
    ['two roots', '<a/><b/>'],
    ['a raw < in an attribute', '<svg a="<"></svg>'],
  ])('refuses %s', (_what, source) => {
    expect(() => parseXml(source)).toThrow(XmlError);
  });
});
