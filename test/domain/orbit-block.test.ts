import { describe, expect, it } from 'vitest';
import { orbitBlockFromJson } from '../../src/domain/orbit-block.js';

const BLOCK = { epoch: '2027-03-01T00:00:00Z', q: 0.91, e: 0.32, i: 7.5, node: 120.1, peri: 48.7, tp: '2027-02-10T12:00:00Z', H: 25.1, G: 0.15 };

describe('orbit block read back from storage', () => {
  it('gives back the block that was stored', () => {
    expect(orbitBlockFromJson(JSON.stringify(BLOCK))).toEqual({ ok: true, block: BLOCK });
  });

  it('takes a block without H and G', () => {
    const { H: _h, G: _g, ...bare } = BLOCK;
    expect(orbitBlockFromJson(JSON.stringify(bare))).toEqual({ ok: true, block: bare });
  });

  it('names the field that no longer fits', () => {
    const read = orbitBlockFromJson(JSON.stringify({ ...BLOCK, q: '0.91', tp: 'soon' }));
    expect(read.ok).toBe(false);
    if (!read.ok) {
      expect(read.message).toMatch(/^the orbit block does not fit its format \(/);
      expect(read.message).toContain('q: ');
      expect(read.message).toContain('tp: expected an ISO-8601 time');
    }
  });

  it('refuses a field the format does not have, and text that is not JSON', () => {
    expect(orbitBlockFromJson(JSON.stringify({ ...BLOCK, period: 1.2 })).ok).toBe(false);
    expect(orbitBlockFromJson('{"q": 0.9')).toEqual({ ok: false, message: 'the orbit block is not JSON' });
  });
});
