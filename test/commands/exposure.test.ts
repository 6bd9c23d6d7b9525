import { describe, expect, it } from 'vitest';
import { main } from '../../src/commands/exposure.js';
import { UsageError, type CommandIo } from '../../src/commands/io.js';

/**
 * The demo site lantern-ridge (config/default.json) worked by hand: every figure
 * below is recomputed here from the configuration numbers with the published
 * formulas, without calling the photometry module.
 */

function collect(): { io: CommandIo; out: () => string } {
  let text = '';
  return { io: { stdout: (t) => (text += t), stderr: () => undefined, env: {}, cwd: process.cwd() }, out: () => text };
}

interface StepJson {
  exposureS: number;
  count: number;
  snr: number;
  limitingFactor: string;
  limits: { kind: string; maxExposureS: number }[];
}
interface ExposureJson {
  sky: { vMagPerArcsec2: number; moon: { phaseAngleDeg: number } | null };
  plans: {
    kind: string;
    steps: StepJson[];
    cadenceS: number;
    slitFraction: number;
    resolutionNm: number;
    totalS: number;
    recentreEveryS: number | null;
  }[];
}

async function runJson(args: string[]): Promise<{ code: number; json: ExposureJson }> {
  const { io, out } = collect();
  const code = await main([...args, '--json'], io);
  return { code, json: JSON.parse(out()) as ExposureJson };
}

const capsOf = (step: StepJson): Record<string, number> => Object.fromEntries(step.limits.map((l) => [l.kind, l.maxExposureS]));

// ---- hand computation, lantern-ridge ----
const AIRMASS = 1.2;
const K_V = 0.15; // V filter extinction, mag/airmass
// Sky (Krisciunas & Schaefer 1991, eq. 2 and 3): altitude ~ asin(1/X) (plane-parallel; Kasten-Young differs by < 0.01 deg here),
// X_KS = (1 - 0.96 sin^2 Z)^-1/2, mu = mu_zenith + k (X_KS - 1) - 2.5 log10 X_KS.
const zenithDistanceRad = Math.PI / 2 - Math.asin(1 / AIRMASS);
const xKs = 1 / Math.sqrt(1 - 0.96 * Math.sin(zenithDistanceRad) ** 2);
const SKY_V = 21.8 + K_V * (xKs - 1) - 2.5 * Math.log10(xKs); // = 21.640
// Seeing 1.3" at the zenith, times X^0.6; aperture radius = 1 FWHM holds 1 - 2^-4 of a Gaussian.
const FWHM = 1.3 * Math.pow(AIRMASS, 0.6); // = 1.4503"
const READ_VAR_IMAGER = 7 ** 2 + 1.5 ** 2 / 12;

function imagerSnrInputs(vMag: number) {
  const pix = 0.39;
  const n = (Math.PI * FWHM * FWHM) / (pix * pix);
  const nEff = n * (1 + 1 / 5); // background annulus 5x the aperture area
  const source = Math.pow(10, -0.4 * (vMag + K_V * AIRMASS - 23.7)) * (1 - 1 / 16);
  const sky = Math.pow(10, -0.4 * (SKY_V - 23.7)) * pix * pix;
  return { source, background: nEff * (sky + 0.002), read: nEff * READ_VAR_IMAGER };
}
const snrOf = (x: { source: number; background: number; read: number }, t: number) => (x.source * t) / Math.sqrt(x.source * t + x.background * t + x.read);
// Positive root of S^2 t^2 - SNR^2 (S + B) t - SNR^2 R = 0.
const tFor = (x: { source: number; background: number; read: number }, snr: number) =>
  (snr * snr * (x.source + x.background) + Math.sqrt(snr ** 4 * (x.source + x.background) ** 2 + 4 * x.source ** 2 * snr * snr * x.read)) / (2 * x.source ** 2);

/** erf by its Maclaurin series (Abramowitz & Stegun 7.1.5), enough terms for |x| < 3. */
function erfSeries(x: number): number {
  let sum = 0;
  let term = x; // x^(2n+1) (-1)^n / n!
  for (let n = 0; n < 80; n++) {
    sum += term / (2 * n + 1);
    term *= (-x * x) / (n + 1);
  }
  return (2 / Math.sqrt(Math.PI)) * sum;
}

const BASE = ['--site', 'lantern-ridge', '--rate', '0.05', '--rate-sigma', '0.001', '--airmass', '1.2', '--snr', '20'];

describe('nightjar exposure on the demo site, against a hand computation', () => {
  it('works out the dark sky at the target as Krisciunas & Schaefer do', async () => {
    const { json } = await runJson([...BASE, '--instrument', 'imager', '--filter', 'V', '--mag', '19']);
    expect(json.sky.vMagPerArcsec2).toBeCloseTo(SKY_V, 2);
    expect(json.sky.moon).toBeNull();
  });

  it('gives the V light-curve exposure of a V 19 object from the quadratic, with its noise regime and caps', async () => {
    const { code, json } = await runJson([...BASE, '--instrument', 'imager', '--filter', 'V', '--mag', '19']);
    expect(code).toBe(0);
    const x = imagerSnrInputs(19);
    const t = Math.ceil(tFor(x, 20) * 10) / 10;
    const plan = json.plans[0]!;
    expect(plan.kind).toBe('photometry');
    const step = plan.steps[0]!;
    expect(step.exposureS).toBeCloseTo(t, 1);
    expect(step.snr).toBeCloseTo(snrOf(x, t), 1);
    // the largest variance term names the regime: source N*, sky n'(s)t, read n'R^2 (dark is negligible here)
    const terms = { 'source-limited': x.source * t, 'sky-limited': x.background * t, 'read-noise-limited': x.read };
    const regime = Object.entries(terms).sort((a, b) => b[1] - a[1])[0]![0];
    expect(step.limitingFactor).toBe(regime);
    const caps = capsOf(step);
    expect(caps['tracking smear']).toBeCloseTo(FWHM / (2 * 0.001), 3);
    expect(caps['maximum exposure']).toBe(300);
    // cadence = exposure + readout 10 s + overhead 5 s; the sequence fills the 60-min default window
    expect(plan.cadenceS).toBeCloseTo(t + 15, 6);
    expect(step.count).toBe(Math.floor(3600 / (t + 15)));
  });

  it('caps a V 21.5 frame at the imager maximum of 300 s and states the SNR it reaches instead', async () => {
    const { json } = await runJson([...BASE, '--instrument', 'imager', '--filter', 'V', '--mag', '21.5']);
    const step = json.plans[0]!.steps[0]!;
    const x = imagerSnrInputs(21.5);
    expect(tFor(x, 20)).toBeGreaterThan(300);
    expect(step.exposureS).toBe(300);
    expect(step.snr).toBeCloseTo(snrOf(x, 300), 1);
    expect(step.limitingFactor).toMatch(/^maximum exposure caps exposures at 300 s/);
  });

  it('gives the 2-arcsec slit spectrum of a V 17 object from the photon zero point, slit loss and the quadratic', async () => {
    const { code, json } = await runJson([...BASE, '--rate-sigma', '0.0005', '--instrument', 'spectrograph', '--mag', '17', '--slit', '2']);
    expect(code).toBe(0);
    // V = 0: 3.631e-9 erg/s/cm^2/A (Bessell et al. 1998) -> photons/s/cm^2/nm at 550 nm
    const photons = (3.631e-9 * 10) / ((6.62607015e-27 * 2.99792458e10) / 550e-7);
    const area = (Math.PI / 4) * 100 * 100 * (1 - 0.35 ** 2);
    const perNm = photons * area * 0.15; // throughput 0.15
    const slitFraction = erfSeries((2 * Math.sqrt(Math.LN2)) / FWHM);
    const alongSlit = erfSeries(2 * Math.sqrt(Math.LN2)); // extraction +-1 FWHM
    const resPix = 3 * (Math.min(2, FWHM) / 1); // 3 px for the 1" slit, scaled by the light width
    const resNm = resPix * 0.3;
    const source = perNm * Math.pow(10, -0.4 * (17 + K_V * AIRMASS)) * slitFraction * alongSlit * resNm;
    const skyPerPix = perNm * Math.pow(10, -0.4 * SKY_V) * 2 * 0.4 * 0.3;
    const n = resPix * ((2 * FWHM) / 0.4);
    const nB = resPix * ((120 - 4 * FWHM) / 0.4);
    const nEff = n * (1 + n / nB);
    const x = { source, background: nEff * (skyPerPix + 0.001), read: nEff * (25 + 1.2 ** 2 / 12) };
    const t = Math.ceil(tFor(x, 20) * 10) / 10;
    const plan = json.plans[0]!;
    expect(plan.kind).toBe('spectrum');
    expect(plan.slitFraction).toBeCloseTo(slitFraction, 6);
    expect(plan.resolutionNm).toBeCloseTo(resNm, 9);
    const step = plan.steps[0]!;
    expect(step.exposureS).toBeCloseTo(t, 1);
    expect(step.count).toBe(1);
    expect(step.snr).toBeCloseTo(snrOf(x, t), 1);
    const caps = capsOf(step);
    expect(caps['drift out of slit']).toBeCloseTo(2 / 4 / 0.0005, 6);
    expect(caps['maximum exposure']).toBe(900);
    // acquisition 300 s + exposure + readout 20 s; the object stays in the slit (w/2)/sigma = 2000 s, so no re-centring
    expect(plan.totalS).toBeCloseTo(300 + t + 20, 6);
    expect(plan.recentreEveryS).toBeCloseTo(2000, 6);
  });

  it('brightens the sky with moonlight when a Moon is given', async () => {
    const dark = await runJson([...BASE, '--instrument', 'imager', '--filter', 'V', '--mag', '19']);
    const moon = await runJson([...BASE, '--instrument', 'imager', '--filter', 'V', '--mag', '19', '--moon-sep', '40', '--moon-illum', '0.9']);
    expect(moon.json.sky.vMagPerArcsec2).toBeLessThan(dark.json.sky.vMagPerArcsec2 - 1);
    expect(moon.json.sky.moon?.phaseAngleDeg).toBeCloseTo((Math.acos(0.8) * 180) / Math.PI, 9);
    expect(moon.json.plans[0]!.steps[0]!.exposureS).toBeGreaterThan(dark.json.plans[0]!.steps[0]!.exposureS);
  });

  it('prints a light-curve and a colours plan in text when no filter is named', async () => {
    const { io, out } = collect();
    const code = await main([...BASE, '--instrument', 'imager', '--mag', '19'], io);
    expect(code).toBe(0);
    expect(out()).toMatch(/photometry \(light curve\), filter V/);
    expect(out()).toMatch(/colours: cycle g r i z z i r g/);
  });

  it('exits 1 with the reason when no plan is feasible', async () => {
    const { io, out } = collect();
    const code = await main([...BASE, '--instrument', 'spectrograph', '--mag', '22'], io);
    expect(code).toBe(1);
    expect(out()).toMatch(/spectrum: not feasible: /);
  });

  it('refuses bad arguments with a usage error naming them', async () => {
    const { io } = collect();
    await expect(main(['--site', 'lantern-ridge', '--instrument', 'imager', '--mag', 'bright', '--rate', '1'], io)).rejects.toThrow(UsageError);
    await expect(main(['--site', 'lantern-ridge', '--instrument', 'camera', '--mag', '19', '--rate', '1'], io)).rejects.toThrow(/--instrument camera/);
    await expect(main([...BASE, '--instrument', 'imager', '--mag', '19', '--moon-sep', '30'], io)).rejects.toThrow(/--moon-sep and --moon-illum/);
    await expect(main([...BASE, '--instrument', 'imager', '--mag', '19', '--filter', 'H'], io)).rejects.toThrow(/--filter H: not on the imager/);
    await expect(main(['--site', 'nowhere', '--instrument', 'imager', '--mag', '19', '--rate', '1'], io)).rejects.toThrow(/unknown site "nowhere"/);
  });
});
