import type { Config } from '../config/schema.js';
import type { Store } from '../store/index.js';
import type { JobSpec } from './scheduler.js';

export interface RequestJobDeps {
  config: Config;
  store: Store;
  clock: () => Date;
  log: { info: (obj: object, msg: string) => void };
}

/** Lease expiry and lapsing of requests whose window has passed. */
export function requestJobs(deps: RequestJobDeps): JobSpec[] {
  const { config, store, clock, log } = deps;
  return [
    {
      name: 'expire-leases',
      schedule: config.service.schedules.expireLeases,
      run: () => {
        const ids = store.requests.expireLeases(clock());
        if (ids.length > 0) log.info({ requests: ids }, 'leases ran out; requests back in the queue or lapsed');
      },
    },
    {
      name: 'lapse-requests',
      schedule: config.service.schedules.lapse,
      run: () => {
        const ids = store.requests.lapse(clock());
        if (ids.length > 0) log.info({ requests: ids }, 'windows passed unobserved; requests lapsed');
      },
    },
  ];
}
