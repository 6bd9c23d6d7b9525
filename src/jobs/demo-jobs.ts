import { mkdirSync, renameSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Config } from '../config/schema.js';
import { simulateNight } from '../planning/simulate.js';
import type { JobSpec } from './scheduler.js';

/**
 * The living demo: invented notices observed shortly before `now`, written
 * into the inbox (temporary name, then renamed into place). Like most survey
 * notices of new objects they carry a tracklet only, so the demo runs the
 * short-arc estimation.
 */
export function writeSimulatedNotices(inboxPath: string, now: Date, count: number, seed: number): string[] {
  mkdirSync(inboxPath, { recursive: true });
  return simulateNight({ now, count, seed }).map((s) => {
    const notice = { ...s.notice };
    const name = `sim-${String(notice['noticeId'])}.json`;
    const tmp = join(inboxPath, `.${name}.part`);
    writeFileSync(tmp, `${JSON.stringify(notice, null, 2)}\n`);
    renameSync(tmp, join(inboxPath, name));
    return name;
  });
}

/** Drips one new simulated notice into the inbox every `demo.dripMinutes`. */
export function demoJobs(deps: { config: Config; clock: () => Date; log: { info: (o: object, m: string) => void } }): JobSpec[] {
  const { config, clock, log } = deps;
  const minutes = config.demo.dripMinutes;
  if (!config.demo.simulate || minutes === 0) return [];
  return [
    {
      name: 'demo-drip',
      schedule: `*/${Math.min(59, minutes)} * * * *`,
      run: () => {
        const now = clock();
        // A new seed each time: the minute count since the epoch.
        const files = writeSimulatedNotices(config.service.inbox.path, now, 1, Math.floor(now.getTime() / 60_000));
        log.info({ files }, 'demo: a new simulated notice dropped into the inbox');
      },
    },
  ];
}
