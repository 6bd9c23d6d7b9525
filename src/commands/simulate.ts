import { mkdirSync, renameSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { loadConfig } from '../config/load.js';
import { parseNotice } from '../intake/notice.js';
import { simulateNight } from '../planning/simulate.js';
import { parseCommandArgs, parseUtcInTable, parseWhole } from './args.js';
import type { CommandMain, CommandIo } from './io.js';

/**
 * `nightjar simulate`: a night of invented discovery notices for the demo,
 * from invented orbits propagated by the orbit module and observed from an
 * invented survey station before the given present. Files are written under a
 * temporary name and renamed into place, so an inbox never reads half a file.
 */
export const HELP = `nightjar simulate [--now ISO] [--count N] [--out DIR] [--seed S] [--with-orbit] [--config FILE]

Invents N discovery notices (nightjar.notice.v1, invented designations and an
invented sender): close approachers and ordinary objects, some observable
tonight from northern sites, some not (too faint, too far south, too fast near
closest approach). Each passes the intake checks against --now.

Options:
  --now ISO       the present (ISO-8601 UTC); default the system clock
  --count N       number of notices, 1..200 (default 7)
  --out DIR       write one JSON file per notice into DIR (created if missing);
                  without it, print the notices as JSON lines
  --seed S        seed of the invention (default 1); the same seed and --now give the same notices
  --with-orbit    also give each notice its orbit block (default: the tracklet only)
  --config FILE   configuration file, for the intake's clock tolerance (default: NIGHTJAR_CONFIG, else the demo)
  -h, --help      show this help`;



interface Options {
  now?: string | undefined;
  count?: string | undefined;
  out?: string | undefined;
  seed?: string | undefined;
  'with-orbit'?: boolean | undefined;
  config?: string | undefined;
  help?: boolean | undefined;
}

export const main: CommandMain = async (argv: string[], io: CommandIo) => {
  const parsed = parseCommandArgs(
    argv,
    {
      now: { type: 'string' },
      count: { type: 'string' },
      out: { type: 'string' },
      seed: { type: 'string' },
      'with-orbit': { type: 'boolean' },
      config: { type: 'string' },
    },
    HELP,
    io,
  );
  if (parsed === null) return 0;
  const values: Options = parsed;
  const now = values.now === undefined ? new Date() : parseUtcInTable('--now', values.now);
  const count = values.count === undefined ? 7 : parseWhole('--count', values.count, 1, 200);
  const seed = values.seed === undefined ? 1 : parseWhole('--seed', values.seed, 0, 2 ** 32 - 1);
  const config = loadConfig({ path: values.config, env: io.env, cwd: io.cwd });
  const simulated = simulateNight({ now, count, seed, withOrbit: values['with-orbit'] === true });
  for (const s of simulated) {
    const checked = parseNotice(s.notice, { now, checkAge: true, futureToleranceMin: config.service.futureToleranceMin });
    if (!checked.ok) {
      // The generator must only make valid notices; say which one failed and why.
      io.stderr(`nightjar simulate: invented notice ${String(s.notice['noticeId'])} fails intake: ${checked.issues.map((i) => `${i.path}: ${i.message}`).join('; ')}\n`);
      return 1;
    }
  }
  if (values.out === undefined) {
    for (const s of simulated) io.stdout(`${JSON.stringify(s.notice)}\n`);
    return 0;
  }
  const dir = resolve(io.cwd, values.out);
  try {
    mkdirSync(dir, { recursive: true });
    for (const s of simulated) {
      const name = `${String(s.notice['noticeId'])}.json`;
      const temporary = join(dir, `.${name}.tmp`);
      writeFileSync(temporary, `${JSON.stringify(s.notice, null, 2)}\n`);
      renameSync(temporary, join(dir, name));
      io.stdout(`${join(dir, name)}  ${String(s.notice['objectId'])}  (${s.kind})\n`);
    }
  } catch (err) {
    io.stderr(`nightjar simulate: cannot write into ${dir}: ${(err as Error).message}\n`);
    return 1;
  }
  return 0;
};
