import { describe, expect, it } from 'vitest';
import { planExposure } from '../../src/photometry/plans.js';
import { demoConfig } from '../helpers.js';

const conditions = { vMag: 18.5, rateArcsecPerS: 0.5, rateSigmaArcsecPerS: 0.002, airmass: 1.2, skyVMagPerArcsec2: 21.5 };

describe('exposure settings from the site configuration', () => {
  it('take the light-curve SNR target from the site', () => {
    const config = demoConfig((raw) => {
      const site = (raw['sites'] as Record<string, unknown>[])[0]!;
      site['exposure'] = { targetSnr: { photometry: 40 } };
    });
    const plan = planExposure('photometry', config.sites[0]!, conditions, {});
    expect(plan.feasible && plan.steps[0].snrPerExposure).toBeCloseTo(40, 0);
  });

  it('use a filter colour from the configuration instead of the table', () => {
    const base = demoConfig();
    const redder = demoConfig((raw) => {
      const filters = ((raw['sites'] as Record<string, Record<string, Record<string, unknown>[]>>[])[0]!['imager']!['filters'])!;
      for (const f of filters) if (f['name'] === 'r') f['asteroidColourFromVMag'] = -0.72;
    });
    const a = planExposure('colours', base.sites[0]!, conditions, {});
    const b = planExposure('colours', redder.sites[0]!, conditions, {});
    if (!a.feasible || !b.feasible) throw new Error('expected feasible colour plans');
    const rOf = (p: typeof a) => p.steps.find((s) => s.filter === 'r')!;
    // Half a magnitude brighter in r: about 10^(0.2 x 0.5) = 1.26 x the SNR per exposure or less time.
    expect(rOf(b).exposureS * rOf(b).count).toBeLessThanOrEqual(rOf(a).exposureS * rOf(a).count);
  });
});
