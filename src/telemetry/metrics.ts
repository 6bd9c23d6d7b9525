/**
 * A small metrics registry rendered in the Prometheus text exposition format
 * (version 0.0.4): counters, histograms and gauges read at scrape time.
 * One registry per service instance (no module-level state).
 */

type Labels = Readonly<Record<string, string>>;

function labelText(labels: Labels): string {
  const entries = Object.entries(labels);
  if (entries.length === 0) return '';
  const esc = (v: string) => v.replace(/\\/g, '\\\\').replace(/\n/g, '\\n').replace(/"/g, '\\"');
  return `{${entries.map(([k, v]) => `${k}="${esc(v)}"`).join(',')}}`;
}

const keyOf = (labels: Labels) => JSON.stringify(Object.entries(labels).sort());

interface CounterState {
  help: string;
  values: Map<string, { labels: Labels; value: number }>;
}

interface HistogramState {
  help: string;
  buckets: number[];
  series: Map<string, { labels: Labels; counts: number[]; sum: number; count: number }>;
}

export type GaugeReader = () => { labels: Labels; value: number }[];

export function createMetrics() {
  const counters = new Map<string, CounterState>();
  const histograms = new Map<string, HistogramState>();
  const gauges = new Map<string, { help: string; read: GaugeReader }>();

  return {
    counter(name: string, help: string) {
      if (!counters.has(name)) counters.set(name, { help, values: new Map() });
      const state = counters.get(name)!;
      return {
        inc(labels: Labels = {}, by = 1) {
          const k = keyOf(labels);
          const cur = state.values.get(k) ?? { labels, value: 0 };
          cur.value += by;
          state.values.set(k, cur);
        },
        get(labels: Labels = {}): number {
          return state.values.get(keyOf(labels))?.value ?? 0;
        },
      };
    },
    /** Buckets are upper bounds in the metric's unit (seconds for durations). */
    histogram(name: string, help: string, buckets: number[]) {
      if (!histograms.has(name)) histograms.set(name, { help, buckets: [...buckets].sort((a, b) => a - b), series: new Map() });
      const state = histograms.get(name)!;
      return {
        observe(value: number, labels: Labels = {}) {
          const k = keyOf(labels);
          const s = state.series.get(k) ?? { labels, counts: state.buckets.map(() => 0), sum: 0, count: 0 };
          state.buckets.forEach((b, i) => {
            if (value <= b) s.counts[i]! += 1;
          });
          s.sum += value;
          s.count += 1;
          state.series.set(k, s);
        },
      };
    },
    gauge(name: string, help: string, read: GaugeReader): void {
      gauges.set(name, { help, read });
    },
    /** The exposition text. */
    render(): string {
      const lines: string[] = [];
      for (const [name, c] of counters) {
        lines.push(`# HELP ${name} ${c.help}`, `# TYPE ${name} counter`);
        if (c.values.size === 0) lines.push(`${name} 0`);
        for (const v of c.values.values()) lines.push(`${name}${labelText(v.labels)} ${v.value}`);
      }
      for (const [name, h] of histograms) {
        lines.push(`# HELP ${name} ${h.help}`, `# TYPE ${name} histogram`);
        const series = h.series.size > 0 ? [...h.series.values()] : [{ labels: {}, counts: h.buckets.map(() => 0), sum: 0, count: 0 }];
        for (const s of series) {
          h.buckets.forEach((b, i) => lines.push(`${name}_bucket${labelText({ ...s.labels, le: String(b) })} ${s.counts[i]}`));
          lines.push(`${name}_bucket${labelText({ ...s.labels, le: '+Inf' })} ${s.count}`);
          lines.push(`${name}_sum${labelText(s.labels)} ${s.sum}`, `${name}_count${labelText(s.labels)} ${s.count}`);
        }
      }
      for (const [name, g] of gauges) {
        lines.push(`# HELP ${name} ${g.help}`, `# TYPE ${name} gauge`);
        const values = g.read();
        if (values.length === 0) lines.push(`${name} 0`);
        for (const v of values) lines.push(`${name}${labelText(v.labels)} ${v.value}`);
      }
      return `${lines.join('\n')}\n`;
    },
  };
}

export type Metrics = ReturnType<typeof createMetrics>;

/** The service's metrics, created once per process and passed to intake, jobs and api. */
export function createServiceMetrics() {
  const registry = createMetrics();
  return {
    registry,
    noticesReceived: registry.counter('nightjar_notices_received_total', 'Notices received, by source kind and result.'),
    leaseConflicts: registry.counter('nightjar_lease_conflicts_total', 'Lease attempts refused because another holder has the request.'),
    pollFailures: registry.counter('nightjar_feed_poll_failures_total', 'Failed feed polls (no answer, a bad answer, or no valid notice in it), by feed.'),
    inboxFileFailures: registry.counter('nightjar_inbox_file_failures_total', 'Failed attempts at reading an inbox file.'),
    assessmentSeconds: registry.histogram('nightjar_assessment_seconds', 'Time to assess one object (orbit, planning, store), seconds.', [
      0.05, 0.1, 0.25, 0.5, 1, 2, 5, 10, 30,
    ]),
    assessmentFailures: registry.counter('nightjar_assessment_failures_total', 'Failed assessments by kind: timeout, crashed, error, refused.'),
    webhookFailures: registry.counter('nightjar_webhook_failures_total', 'Webhook delivery attempts that failed, by hook.'),
  };
}

export type ServiceMetrics = ReturnType<typeof createServiceMetrics>;
