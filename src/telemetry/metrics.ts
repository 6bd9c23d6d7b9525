import { collectDefaultMetrics, Counter, Gauge, Histogram, Registry } from 'prom-client';

/**
 * The service's metrics on prom-client: one registry per service instance (no
 * module-level state, so tests can build many apps), the Prometheus text
 * exposition format, and with `processMetrics` prom-client's default process
 * metrics (event-loop lag, heap and other memory, garbage collection, open
 * handles, CPU, file descriptors) under their usual names (`process_*`,
 * `nodejs_*`), so ready-made dashboards find them.
 */

type Labels = Readonly<Record<string, string>>;

/** A gauge read at scrape time: each call returns the current values by labels. */
export type GaugeReader = () => { labels: Labels; value: number }[];

export interface MetricsOptions {
  /** prom-client's default process metrics (the service turns them on; tests building many apps leave them off). */
  processMetrics?: boolean;
}

/** The service's metrics, created once per process and passed to intake, jobs and api. */
export function createServiceMetrics(options: MetricsOptions = {}) {
  const registry = new Registry();
  if (options.processMetrics) collectDefaultMetrics({ register: registry });
  const counter = (name: string, help: string, labelNames: readonly string[] = []) => new Counter({ name, help, labelNames, registers: [registry] });
  return {
    registry,
    /** A gauge whose values are read from `read` at each scrape. */
    gauge(name: string, help: string, labelNames: readonly string[], read: GaugeReader): void {
      new Gauge({
        name,
        help,
        labelNames,
        registers: [registry],
        collect() {
          this.reset();
          for (const v of read()) this.set(v.labels, v.value);
        },
      });
    },
    /** The exposition text and its content type. */
    async render(): Promise<{ text: string; contentType: string }> {
      return { text: await registry.metrics(), contentType: registry.contentType };
    },
    noticesReceived: counter('nightjar_notices_received_total', 'Notices received, by source kind and result.', ['source', 'result']),
    leaseConflicts: counter('nightjar_lease_conflicts_total', 'Lease attempts refused because another holder has the request.', ['site']),
    pollFailures: counter('nightjar_feed_poll_failures_total', 'Failed feed polls (no answer, a bad answer, or no valid notice in it), by feed.', ['feed']),
    inboxFileFailures: counter('nightjar_inbox_file_failures_total', 'Failed attempts at reading an inbox file.'),
    assessmentSeconds: new Histogram({
      name: 'nightjar_assessment_seconds',
      help: 'Time to assess one object (orbit, planning, store), seconds.',
      buckets: [0.05, 0.1, 0.25, 0.5, 1, 2, 5, 10, 30],
      registers: [registry],
    }),
    assessmentFailures: counter('nightjar_assessment_failures_total', 'Failed assessments by kind: timeout, crashed, error, refused.', ['kind']),
    webhookFailures: counter('nightjar_webhook_failures_total', 'Webhook delivery attempts that failed, by hook.', ['hook']),
  };
}

export type ServiceMetrics = ReturnType<typeof createServiceMetrics>;
