import { describe, expect, it } from 'vitest';
import { localNightOf } from '../../src/sky/night.js';

// Worked by hand: local mean time = UTC + east longitude / 15 h; the night is the date 12 h earlier.
describe('the local night of an instant', () => {
  it('is the previous date before local mean noon (107.62 deg W: 06:00 UTC is 22:49 local)', () => {
    expect(localNightOf(new Date('2027-03-04T06:00:00Z'), -107.62)).toBe('2027-03-03');
  });

  it('is the same date after local mean noon (107.62 deg W: 20:00 UTC is 12:49 local)', () => {
    expect(localNightOf(new Date('2027-03-04T20:00:00Z'), -107.62)).toBe('2027-03-04');
  });

  it('takes east longitudes above 180 deg as west ones (252.38 deg E = 107.62 deg W)', () => {
    expect(localNightOf(new Date('2027-03-04T06:00:00Z'), 252.38)).toBe('2027-03-03');
  });

  it('puts an east site past its local midnight in the night that began the evening before (138.24 deg E: 18:00 UTC is 03:13 local)', () => {
    expect(localNightOf(new Date('2027-03-04T18:00:00Z'), 138.24)).toBe('2027-03-04');
  });
});
