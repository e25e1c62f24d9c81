import { Counter, Gauge, Histogram, Registry, collectDefaultMetrics } from 'prom-client';

/**
 * plumbline's Prometheus metrics, served at `/metrics` by `plumbline serve`.
 *
 * They live on a registry of their own, never prom-client's global one, so an
 * application embedding plumbline (or a test) cannot collide with them. Other
 * modules count through the process-wide `metrics` object:
 *
 * ```ts
 * import { metrics } from '../metrics.js';
 * metrics.deliveries.inc({ channel: 'chat', outcome: 'sent' });   // or 'failed', 'parked'
 * ```
 *
 * Label values are small closed sets (documented per metric) so series stay few.
 * Gauges read from the state schema (data lag, last success) are refreshed at
 * scrape time by `refreshStateGauges`, from database time, so every replica
 * reports the same values.
 */
export interface Metrics {
  readonly registry: Registry;
  /** `plumbline_run_duration_seconds{kind}`; kind: `daily` (a whole pass), `day` (one business day in it), `digest`. */
  readonly runDuration: Histogram<'kind'>;
  /** `plumbline_runs_total{kind, status}`; status: `done`, `failed`, `abandoned` (stopped by shutdown). */
  readonly runs: Counter<'kind' | 'status'>;
  /** `plumbline_findings_total{check, severity, muted}`: findings stored by the scheduled runs; muted: `true` or `false`. */
  readonly findings: Counter<'check' | 'severity' | 'muted'>;
  /** `plumbline_deliveries_total{channel, outcome}`; channel: `chat`, `email`; outcome: `sent`, `failed` (will retry), `parked` (gave up). */
  readonly deliveries: Counter<'channel' | 'outcome'>;
  /** `plumbline_claims_total{job, outcome}`; outcome: `claimed`, `waited` (another replica held it first), `already_done`. */
  readonly claims: Counter<'job' | 'outcome'>;
  /** `plumbline_ticks_skipped_total{job}`: schedule ticks dropped because the same job was still running. */
  readonly ticksSkipped: Counter<'job'>;
  /** `plumbline_last_success_timestamp_seconds{job}`: end of the last successful pass of any replica (state schema). */
  readonly lastSuccess: Gauge<'job'>;
  /** `plumbline_data_lag_seconds{platform}`: database now minus the newest event seen by any rollup. */
  readonly dataLag: Gauge<'platform'>;
  /** `plumbline_http_requests_total{route, status}`; route is the registered pattern, never the raw path. */
  readonly httpRequests: Counter<'route' | 'status'>;
  /** `plumbline_unhandled_errors_total{kind}`; kind: `rejection` (logged, the service keeps running), `exception` (logged, exit 70). */
  readonly unhandledErrors: Counter<'kind'>;
}

export function createMetrics(options: { processMetrics?: boolean } = {}): Metrics {
  const registry = new Registry();
  const registers = [registry];
  if (options.processMetrics) collectDefaultMetrics({ register: registry, prefix: 'plumbline_' });
  return {
    registry,
    runDuration: new Histogram({
      name: 'plumbline_run_duration_seconds',
      help: 'Duration of scheduled runs: a daily pass, one business day within it, or the weekly digest.',
      labelNames: ['kind'],
      // A day of a small team takes seconds; a catch-up pass over a large warehouse can take an hour.
      buckets: [1, 5, 15, 30, 60, 120, 300, 600, 1200, 1800, 3600, 7200],
      registers,
    }),
    runs: new Counter({ name: 'plumbline_runs_total', help: 'Scheduled runs by kind and final status.', labelNames: ['kind', 'status'], registers }),
    findings: new Counter({
      name: 'plumbline_findings_total',
      help: 'Findings stored by scheduled runs, by check, severity and whether a mute covered them.',
      labelNames: ['check', 'severity', 'muted'],
      registers,
    }),
    deliveries: new Counter({
      name: 'plumbline_deliveries_total',
      help: 'Delivery attempts by channel and outcome (sent, failed, parked).',
      labelNames: ['channel', 'outcome'],
      registers,
    }),
    claims: new Counter({
      name: 'plumbline_claims_total',
      help: 'Claims of scheduled work across replicas, by job and outcome.',
      labelNames: ['job', 'outcome'],
      registers,
    }),
    ticksSkipped: new Counter({
      name: 'plumbline_ticks_skipped_total',
      help: 'Schedule ticks skipped because the same job was still running in this process.',
      labelNames: ['job'],
      registers,
    }),
    lastSuccess: new Gauge({
      name: 'plumbline_last_success_timestamp_seconds',
      help: 'Unix time at which the last successful pass of a job ended, on any replica.',
      labelNames: ['job'],
      registers,
    }),
    dataLag: new Gauge({
      name: 'plumbline_data_lag_seconds',
      help: 'Seconds between database now and the newest event any rollup has seen, per platform.',
      labelNames: ['platform'],
      registers,
    }),
    httpRequests: new Counter({
      name: 'plumbline_http_requests_total',
      help: 'HTTP requests served, by route pattern and status code.',
      labelNames: ['route', 'status'],
      registers,
    }),
    unhandledErrors: new Counter({
      name: 'plumbline_unhandled_errors_total',
      help: 'Errors nobody handled in serve (bugs): rejected promises (the service keeps running) and uncaught exceptions (it exits 70).',
      labelNames: ['kind'],
      registers,
    }),
  };
}

/** The process-wide metrics, with Node.js process metrics (memory, event loop delay). */
export const metrics: Metrics = createMetrics({ processMetrics: true });
