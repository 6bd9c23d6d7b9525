import type { Config } from '../config/schema.js';
import { pollFeed, feedSourceName } from '../intake/feed.js';
import { processInbox } from '../intake/inbox.js';
import type { Intake } from '../intake/ingest.js';
import { summarise } from '../intake/ingest.js';
import type { Store } from '../store/index.js';
import type { ServiceMetrics } from '../telemetry/metrics.js';
import type { JobSpec } from './scheduler.js';

export interface IntakeJobDeps {
  config: Config;
  store: Store;
  intake: Intake;
  clock: () => Date;
  log: { info: (obj: object, msg: string) => void; warn: (obj: object, msg: string) => void };
  fetchFn?: typeof fetch;
  metrics?: ServiceMetrics;
  /** Says that notices were accepted, so their assessment can start without waiting for the next tick. */
  workQueued?: () => void;
}

/** The inbox scan and one poll job per configured feed. */
export function intakeJobs(deps: IntakeJobDeps): JobSpec[] {
  const { config, store, intake, clock, log } = deps;
  const inbox = config.service.inbox;
  const jobs: JobSpec[] = [
    {
      name: 'scan-inbox',
      schedule: inbox.schedule,
      run: () => {
        const now = clock();
        let outcomes;
        try {
          outcomes = processInbox(intake, inbox.path, now, inbox.settleMs, store.sources);
        } catch (err) {
          // The folder itself cannot be read: shown in /readyz, tried again at the next scan.
          const error = `inbox ${inbox.path}: ${err instanceof Error ? err.message : String(err)}`;
          store.sources.recordFailure('inbox', now, error, null);
          log.warn({ inbox: inbox.path, error }, 'inbox scan failed');
          return;
        }
        const all = outcomes.flatMap((o) => o.results);
        const counts = summarise(all);
        const failed = outcomes.filter((o) => o.failure);
        if (failed.length > 0) {
          const first = failed[0]!;
          store.sources.recordFailure('inbox', now, `${failed.length} file(s) failed, e.g. ${first.file}: ${first.failure!.error}`, null, {
            noticesSeen: all.length,
            noticesRejected: counts.rejected,
          });
        } else store.sources.recordSuccess('inbox', now, { noticesSeen: all.length, noticesRejected: counts.rejected });
        for (const o of outcomes) {
          if (o.failure) {
            deps.metrics?.inboxFileFailures.inc();
            log.warn({ file: o.file, movedTo: o.movedTo, attempts: o.failure.attempts, error: o.failure.error }, o.movedTo ? 'inbox file failed again: moved to rejected/' : 'inbox file failed: tried again at the next scan');
          } else log.info({ file: o.file, movedTo: o.movedTo, ...summarise(o.results) }, 'inbox file read');
        }
        if (all.some((r) => r.status === 'accepted')) deps.workQueued?.();
      },
    },
  ];
  for (const feed of config.service.feeds) {
    jobs.push({
      name: `poll-${feed.id}`,
      schedule: feed.schedule,
      run: async () => {
        const outcome = await pollFeed(feed, {
          intake,
          sources: store.sources,
          now: clock,
          ...(deps.fetchFn ? { fetchFn: deps.fetchFn } : {}),
        });
        if (outcome.status === 'failed') {
          deps.metrics?.pollFailures.inc({ feed: feed.id });
          log.warn({ feed: feedSourceName(feed), ...outcome }, 'feed poll failed');
        }
        else if (outcome.status === 'fetched') {
          log.info({ feed: feedSourceName(feed), ...outcome }, 'feed polled');
          if (outcome.accepted > 0) deps.workQueued?.();
        }
      },
    });
  }
  return jobs;
}
