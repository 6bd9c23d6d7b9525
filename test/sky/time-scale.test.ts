import { readdirSync, readFileSync } from 'node:fs';
import { dirname, join, relative, resolve } from 'node:path';
import { describe, expect, it } from 'vitest';
import { AstroTime, DeltaT_EspenakMeeus, MakeTime } from 'astronomy-engine';
import { ttFromUtc, utcFromTt } from '../../src/orbit/time.js';
import { SkyInputError } from '../../src/sky/errors.js';
import { LEAP_SECONDS_VALID_UNTIL_UTC } from '../../src/sky/leap-seconds.js';
import { astroTimeFromTt, timeScaleInstalled, ttMinusUtcS, utDaysFromTt } from '../../src/sky/time-scale.js';

const J2000_MS = Date.UTC(2000, 0, 1, 12);
const ttMinusUtcOf = (iso: string) => ttMinusUtcS(new Date(iso));

// IERS Bulletin C 49 (January 2015): UTC - TAI = -35 s until 2015 June 30, -36 s from 2015 July 1, 0h UTC.
// IERS Bulletin C 52 (July 2016): UTC - TAI = -36 s until 2016 December 31, -37 s from 2017 January 1, 0h UTC.
// TT - TAI = 32.184 s (IAU 1991 Resolution A4).
describe('TT - UTC from the leap-second table', () => {
  it('is 67.184 s in the last second of 2015 June 30 and 68.184 s from 2015 July 1, 0h UTC', () => {
    expect(ttMinusUtcOf('2015-06-30T23:59:59.999Z')).toBe(67.184);
    expect(ttMinusUtcOf('2015-07-01T00:00:00.000Z')).toBe(68.184);
  });

  it('is 68.184 s in the last second of 2016 December 31 and 69.184 s from 2017 January 1, 0h UTC', () => {
    expect(ttMinusUtcOf('2016-12-31T23:59:59.999Z')).toBe(68.184);
    expect(ttMinusUtcOf('2017-01-01T00:00:00.000Z')).toBe(69.184);
  });

  it('is 69.184 s for the demo nights of 2026 and 2027 (no leap second since 2017)', () => {
    expect(ttMinusUtcOf('2026-11-30T08:00:00Z')).toBe(69.184);
    expect(ttMinusUtcOf('2027-03-15T00:00:00Z')).toBe(69.184);
  });

  it("refuses an instant at the table's validity horizon, naming the horizon and how to update the table", () => {
    expect(() => ttMinusUtcS(new Date(LEAP_SECONDS_VALID_UNTIL_UTC))).toThrow(SkyInputError);
    expect(() => ttFromUtc(new Date('2030-01-01T00:00:00Z'))).toThrow(/validity horizon of the leap-second table.*update src\/sky\/leap-seconds\.ts/);
    expect(() => ttMinusUtcS(new Date(Date.parse(LEAP_SECONDS_VALID_UNTIL_UTC) - 1))).not.toThrow();
  });

  it('refuses an instant before 1972, where the table begins', () => {
    expect(() => ttFromUtc(new Date('1971-12-31T23:59:59Z'))).toThrow(/before 1972-01-01/);
  });
});

describe('UTC -> TT in the orbit module and astronomy-engine', () => {
  it('puts TT 69.184 s after UTC on 2027-03-04, in days since J2000.0', () => {
    const when = new Date('2027-03-04T00:00:00Z');
    expect((ttFromUtc(when) - (when.getTime() - J2000_MS) / 86_400_000) * 86_400).toBeCloseTo(69.184, 6);
  });

  it("replaces astronomy-engine's extrapolated model, which gives 75.6 s for 2026 December 1 (6.4 s too much)", () => {
    const ut = (Date.parse('2026-12-01T00:00:00Z') - J2000_MS) / 86_400_000;
    expect(Math.abs(DeltaT_EspenakMeeus(ut) - 75.6)).toBeLessThan(0.05);
  });

  it("makes astronomy-engine's own TT the table's in this thread (its default model gives about 75 s for 2027)", () => {
    expect(timeScaleInstalled()).toBe(true);
    const when = new Date('2027-03-04T00:00:00Z');
    expect(MakeTime(when).tt).toBeCloseTo(ttFromUtc(when), 12);
  });

  it('inverts UTC -> TT exactly on either side of the 2016 leap second', () => {
    for (const iso of ['2016-12-31T23:59:59.000Z', '2017-01-01T00:00:00.000Z', '2027-03-04T05:06:07.000Z']) {
      expect(utcFromTt(ttFromUtc(new Date(iso))).toISOString()).toBe(iso);
    }
  });

  it('maps a TT inside the 2016 leap second (UTC 23:59:60) to the instant it ends, and terminates', () => {
    const endUt = (Date.parse('2017-01-01T00:00:00Z') - J2000_MS) / 86_400_000;
    const insideTt = endUt + 68.7 / 86_400; // 0.5 s into the inserted second
    expect(utDaysFromTt(insideTt)).toBe(endUt);
    expect(astroTimeFromTt(insideTt).date.toISOString()).toBe('2017-01-01T00:00:00.000Z');
  });

  it('gives an astronomy-engine time whose TT is the one asked for outside leap seconds', () => {
    const tt = ttFromUtc(new Date('2027-03-04T05:06:07Z'));
    expect(Math.abs(astroTimeFromTt(tt).tt - tt)).toBeLessThan(1e-12);
    expect(astroTimeFromTt(tt).tt).toBeCloseTo(AstroTime.FromTerrestrialTime(tt).tt, 12);
  });
});

// astronomy-engine's Delta T is global to the library: each module that uses its time must load
// src/sky/time-scale.ts first, and so must every entry point (commands, server, worker threads).
describe('where the time scale is installed', () => {
  const root = resolve('src');
  const files = (dir: string): string[] =>
    readdirSync(dir, { withFileTypes: true }).flatMap((d) => (d.isDirectory() ? files(join(dir, d.name)) : d.name.endsWith('.ts') ? [join(dir, d.name)] : []));
  const all = files(root);
  const importsOf = (file: string): string[] => {
    const text = readFileSync(file, 'utf8');
    const specs = [...text.matchAll(/(?:from\s+|import\s*\(\s*|import\s+)'(\.{1,2}\/[^']+)'/g)].map((m) => m[1]!);
    return specs.map((s) => resolve(dirname(file), s.replace(/\.js$/, '.ts')));
  };
  const timeScale = join(root, 'sky', 'time-scale.ts');
  const reaches = (file: string): boolean => {
    const seen = new Set<string>();
    const stack = [file];
    while (stack.length > 0) {
      const f = stack.pop()!;
      if (f === timeScale) return true;
      if (seen.has(f)) continue;
      seen.add(f);
      stack.push(...importsOf(f).filter((g) => all.includes(g)));
    }
    return false;
  };

  it('is loaded by every module that imports astronomy-engine', () => {
    const users = all.filter((f) => /from 'astronomy-engine'/.test(readFileSync(f, 'utf8')));
    expect(users.length).toBeGreaterThan(5);
    expect(users.filter((f) => !reaches(f)).map((f) => relative(root, f))).toEqual([]);
  });

  it('is loaded by the command line, the server and every worker thread script', () => {
    const entries = all.filter((f) => /(?:^|\/)(cli|server)\.ts$|-worker\.ts$/.test(f));
    expect(entries.length).toBeGreaterThanOrEqual(4);
    expect(entries.filter((f) => !reaches(f)).map((f) => relative(root, f))).toEqual([]);
  });
});
