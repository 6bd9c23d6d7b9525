import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { loadConfig } from '../../src/config/load.js';
import type { ObservingConditions } from '../../src/photometry/conditions.js';
import { PlanConfigError } from '../../src/photometry/conditions.js';
import { coloursPlan, photometryPlan, planExposure, spectrumPlan, type PlanResult } from '../../src/photometry/plans.js';
import { PhotometryInputError } from '../../src/photometry/errors.js';
import { FOLLOWUP_1M } from './telescopes.js';

const DEMO = loadConfig({ env: {} }).sites.find((s) => s.id === 'lantern-ridge')!;

const base: ObservingConditions = {
  vMag: 18,
  rateArcsecPerS: 0.05,
  rateSigmaArcsecPerS: 0.001,
  airmass: 1.2,
  skyVMagPerArcsec2: 21.6,
};

function feasible<P extends PlanResult>(plan: P): Exclude<P, { feasible: false }> {
  if (!plan.feasible) throw new Error(`expected a feasible plan: ${plan.reason}`);
  return plan as Exclude<P, { feasible: false }>;
}

describe('light-curve (photometry) plan', () => {
  it('takes single frames that reach the SNR when nothing caps them, naming the noise regime', () => {
    const plan = feasible(photometryPlan(DEMO, { ...base, diameterRangeM: { minM: 300, maxM: 700 } }, { windowS: 7200 }));
    const step = plan.steps[0];
    expect(step.filter).toBe('V');
    expect(step.boundBy).toBeNull();
    expect(step.snr).toBeGreaterThanOrEqual(20);
    expect(step.limitingFactor).toMatch(/^(sky|source|read-noise)-limited/);
    expect(plan.cadenceS).toBeCloseTo(step.exposureS + DEMO.imager.readoutS + 5, 9);
    expect(step.count).toBe(Math.floor(7200 / plan.cadenceS));
  });

  it('caps frames at a tenth of the shortest plausible period for a small fast rotator', () => {
    const plan = feasible(photometryPlan(DEMO, { ...base, vMag: 17, diameterRangeM: { minM: 40, maxM: 90 } }));
    const step = plan.steps[0];
    expect(step.boundBy).toBe('rotation sampling');
    expect(step.exposureS).toBeLessThanOrEqual(3);
    expect(step.limitingFactor).toMatch(/rotation sampling caps exposures at 3 s/);
  });

  it('is not feasible when a capped frame falls below the useful SNR, and says by how much', () => {
    const plan = photometryPlan(DEMO, { ...base, vMag: 19, diameterRangeM: { minM: 40, maxM: 90 } });
    expect(plan.feasible).toBe(false);
    if (plan.feasible) return;
    expect(plan.reason).toMatch(/below the useful minimum 10/);
    expect(plan.figures['snr']).toBeLessThan(10);
  });
});

describe('colours plan', () => {
  it('runs g r i z in mirrored cycles with equal counts in every filter', () => {
    const plan = feasible(coloursPlan(DEMO, base));
    expect(plan.cycle).toEqual(['g', 'r', 'i', 'z', 'z', 'i', 'r', 'g']);
    const counts = new Set(plan.steps.map((s) => s.count));
    expect(counts.size).toBe(1);
    expect(plan.steps[0]!.count).toBe(2 * plan.cycles);
  });

  it('brings every filter to the target SNR', () => {
    const plan = feasible(coloursPlan(DEMO, { ...base, vMag: 20 }));
    for (const step of plan.steps) expect(step.snr).toBeGreaterThanOrEqual(30 * (1 - 1e-9));
  });

  it('stacks when the tracking error caps the exposures, and says so', () => {
    const plan = feasible(coloursPlan(DEMO, { ...base, vMag: 20, rateSigmaArcsecPerS: 0.01 }));
    const z = plan.steps.find((s) => s.filter === 'z')!;
    expect(z.boundBy).toBe('tracking smear');
    expect(z.limitingFactor).toMatch(/tracking smear caps exposures at .* s .*exposures stacked/);
  });

  it('refuses colour filters the imager does not have', () => {
    expect(() => coloursPlan(DEMO, base, { colourFilters: ['g', 'Y'] })).toThrow(PlanConfigError);
  });

  it('is not feasible with a single filter', () => {
    const plan = coloursPlan(FOLLOWUP_1M, base);
    expect(plan.feasible).toBe(false);
  });
});

describe('spectrum plan', () => {
  it('picks the configured slit with the shortest total time and reports resolution and limiting magnitude', () => {
    const plan = feasible(spectrumPlan(DEMO, { ...base, vMag: 17, rateSigmaArcsecPerS: 0.0005 }));
    expect(DEMO.spectrograph!.slitWidthsArcsec).toContain(plan.slitArcsec);
    for (const other of DEMO.spectrograph!.slitWidthsArcsec) {
      const alt = spectrumPlan(DEMO, { ...base, vMag: 17, rateSigmaArcsecPerS: 0.0005 }, { slitArcsec: other });
      if (alt.feasible) expect(plan.totalS).toBeLessThanOrEqual(alt.totalS);
    }
    expect(plan.limitingMagnitude.windowV).toBeGreaterThan(plan.limitingMagnitude.singleExposureV);
    expect(plan.resolvingPower).toBeGreaterThan(100);
  });

  it('stacks exposures capped by drift out of the slit', () => {
    const plan = feasible(spectrumPlan(DEMO, { ...base, vMag: 16, rateSigmaArcsecPerS: 0.005 }, { slitArcsec: 2 }));
    const step = plan.steps[0];
    expect(step.boundBy).toBe('drift out of slit');
    expect(step.exposureS).toBeLessThanOrEqual(2 / 4 / 0.005);
    expect(step.count).toBeGreaterThan(1);
    expect(step.limitingFactor).toMatch(/drift out of slit caps exposures at 100 s/);
  });

  it('is not feasible beyond its limiting magnitude and reports that magnitude', () => {
    const plan = spectrumPlan(DEMO, { ...base, vMag: 21 });
    expect(plan.feasible).toBe(false);
    if (plan.feasible) return;
    expect(plan.figures['limitingV']).toBeLessThan(21);
    expect(plan.reason).toMatch(/slit 3 arcsec/);
  });
});

const conditionsArb = fc.record({
  vMag: fc.double({ min: 10, max: 22, noNaN: true }),
  rateArcsecPerS: fc.double({ min: 0, max: 2, noNaN: true }),
  rateSigmaArcsecPerS: fc.double({ min: 0, max: 0.05, noNaN: true }),
  airmass: fc.double({ min: 1, max: 2.4, noNaN: true }),
  skyVMagPerArcsec2: fc.double({ min: 17, max: 22, noNaN: true }),
  diameterRangeM: fc.double({ min: 5, max: 2000, noNaN: true }).map((d) => ({ minM: d, maxM: d * 2.5 })),
});

describe('every plan', () => {
  it('never exceeds a limit it reports, and says what bound it', () => {
    fc.assert(
      fc.property(conditionsArb, fc.constantFrom('photometry' as const, 'colours' as const, 'spectrum' as const), fc.constantFrom('non-sidereal' as const, 'sidereal' as const), (c, kind, tracking) => {
        const plan = planExposure(kind, DEMO, c, { tracking });
        if (!plan.feasible) {
          expect(plan.reason.length).toBeGreaterThan(10);
          return;
        }
        expect(plan.kind).toBe(kind);
        for (const step of plan.steps) {
          for (const limit of step.limits) expect(step.exposureS).toBeLessThanOrEqual(limit.maxExposureS);
          expect(step.exposureS).toBeGreaterThanOrEqual(1);
          if (step.boundBy !== null) expect(step.limits[0]?.kind).toBe(step.boundBy);
          expect(step.limitingFactor.length).toBeGreaterThan(0);
        }
      }),
      { numRuns: 150 },
    );
  });

  it('reaches the target SNR whenever it stacks or is not capped', () => {
    fc.assert(
      fc.property(conditionsArb, fc.constantFrom('colours' as const, 'spectrum' as const), (c, kind) => {
        const plan = planExposure(kind, DEMO, c);
        if (!plan.feasible) return;
        const target = kind === 'colours' ? 30 : 20;
        for (const step of plan.steps) expect(step.snr).toBeGreaterThanOrEqual(target * (1 - 1e-9));
      }),
      { numRuns: 100 },
    );
  });

  it('rejects bad conditions by field name', () => {
    expect(() => planExposure('photometry', DEMO, { ...base, airmass: 0.5 })).toThrow(PhotometryInputError);
    expect(() => planExposure('spectrum', DEMO, { ...base, rateSigmaArcsecPerS: -1 })).toThrow(/rateSigmaArcsecPerS = -1/);
  });
});

describe('sky-plane rate', () => {
  it('combines raRate (times cos Dec) and decRate in quadrature', async () => {
    const { skyPlaneRateArcsecPerS } = await import('../../src/photometry/conditions.js');
    expect(skyPlaneRateArcsecPerS(0.03, -0.04)).toBeCloseTo(0.05, 15);
    expect(() => skyPlaneRateArcsecPerS(Number.NaN, 0)).toThrow(/raRate = NaN/);
  });

});
