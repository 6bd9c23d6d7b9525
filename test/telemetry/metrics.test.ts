import { describe, expect, it } from 'vitest';
import { createServiceMetrics } from '../../src/telemetry/metrics.js';

/** The names the service's own metrics had before prom-client; scrapers and alerts keep working. */
const SERVICE_METRICS = [
  'nightjar_notices_received_total',
  'nightjar_lease_conflicts_total',
  'nightjar_feed_poll_failures_total',
  'nightjar_inbox_file_failures_total',
  'nightjar_assessment_seconds',
  'nightjar_assessment_failures_total',
  'nightjar_webhook_failures_total',
];

describe('metrics', () => {
  it('keeps the service metrics under their names, in the Prometheus text format', async () => {
    const metrics = createServiceMetrics();
    metrics.noticesReceived.inc({ source: 'inbox', result: 'accepted' });
    metrics.assessmentSeconds.observe(0.3);
    const { text, contentType } = await metrics.render();
    expect(contentType).toMatch(/^text\/plain; version=0\.0\.4/);
    for (const name of SERVICE_METRICS) expect(text).toContain(`# TYPE ${name} `);
    expect(text).toContain('nightjar_notices_received_total{source="inbox",result="accepted"} 1');
    expect(text).toContain('nightjar_assessment_seconds_bucket{le="0.5"} 1');
    expect(text).toContain('nightjar_assessment_seconds_count 1');
  });

  it('reads gauges at scrape time, dropping label sets that are gone', async () => {
    const metrics = createServiceMetrics();
    let values = [{ labels: { site: 'a' }, value: 3 }, { labels: { site: 'b' }, value: 1 }];
    metrics.gauge('nightjar_queue_depth', 'Queued requests per site.', ['site'], () => values);
    expect((await metrics.render()).text).toContain('nightjar_queue_depth{site="b"} 1');
    values = [{ labels: { site: 'a' }, value: 4 }];
    const text = (await metrics.render()).text;
    expect(text).toContain('nightjar_queue_depth{site="a"} 4');
    expect(text).not.toContain('site="b"');
  });

  it('adds the process metrics a long-running service needs: event-loop lag, heap, garbage collection, handles', async () => {
    const text = (await createServiceMetrics({ processMetrics: true }).render()).text;
    for (const name of [
      'nodejs_eventloop_lag_seconds',
      'nodejs_eventloop_lag_p99_seconds',
      'nodejs_heap_size_used_bytes',
      'nodejs_gc_duration_seconds',
      'nodejs_active_handles_total',
      'process_resident_memory_bytes',
      'process_cpu_seconds_total',
    ]) expect(text).toContain(`# TYPE ${name} `);
  });

  it('keeps each instance\'s metrics apart (no process-wide registry)', async () => {
    const a = createServiceMetrics();
    const b = createServiceMetrics();
    a.leaseConflicts.inc({ site: 'x' });
    expect((await b.render()).text).not.toContain('nightjar_lease_conflicts_total{site="x"} 1');
  });
});
