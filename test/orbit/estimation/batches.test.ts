import { describe, expect, it } from 'vitest';
import { stateFromPerihelionElements } from '../../../src/orbit/elements.js';
import { ensemblePlacesForSites } from '../../../src/orbit/ephemeris.js';
import { batchedEnsemblePlacesForSites, BATCH_SIZE } from '../../../src/orbit/estimation/batches.js';
import { ttFromUtc } from '../../../src/orbit/time.js';

const sites = [
  { latDeg: 34.21, lonDeg: -107.62, heightM: 2310 },
  { latDeg: -31.2, lonDeg: 121.6, heightM: 400 },
];

/** An invented spread of Earth-approaching orbits, several batches' worth. */
function ensemble(count: number, epochUtc: Date) {
  const tt = ttFromUtc(epochUtc);
  return Array.from({ length: count }, (_, m) =>
    stateFromPerihelionElements({ qAu: 0.95 + 0.002 * (m % 37), e: 0.2 + 0.001 * (m % 11), iDeg: 5 + (m % 7), nodeDeg: 40 + 0.01 * m, periDeg: 120, tpTt: tt - 20 + 0.05 * (m % 13) }, tt),
  );
}

describe('ensemble places in encounter batches', () => {
  it('puts every member where one unbatched call puts it, to 1 mas, at every site and time', () => {
    const epoch = new Date('2027-05-01T00:00:00Z');
    const states = ensemble(3 * BATCH_SIZE + 17, epoch);
    const times = [1, 6, 18, 36].map((h) => new Date(epoch.getTime() + h * 3600_000));
    const batched = batchedEnsemblePlacesForSites(states, sites, times, 2);
    const whole = ensemblePlacesForSites(states, sites, times);
    let worstMas = 0;
    sites.forEach((_, v) => {
      for (let j = 0; j < states.length * times.length; j++) {
        const dRa = (batched[v]!.raDeg[j]! - whole[v]!.raDeg[j]!) * Math.cos((whole[v]!.decDeg[j]! * Math.PI) / 180);
        const dDec = batched[v]!.decDeg[j]! - whole[v]!.decDeg[j]!;
        worstMas = Math.max(worstMas, Math.hypot(dRa, dDec) * 3.6e6);
        expect(batched[v]!.deltaAu[j]!).toBeCloseTo(whole[v]!.deltaAu[j]!, 9);
      }
    });
    expect(worstMas).toBeLessThan(1);
  });
});
