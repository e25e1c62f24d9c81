/** Test doubles for the scheduler suites: a hand-fired cron and a logger that keeps its lines. */
import { Writable } from 'node:stream';
import { pino } from 'pino';
import type { CronDriver } from '../../service/scheduler/scheduler.js';

/** A cron driver whose ticks the test fires by hand, with the instant it chooses. */
export class HandCron implements CronDriver {
  readonly entries = new Map<string, { expression: string; timezone: string; onTick: (at: Date) => void; stopped: boolean }>();
  schedule(entry: { name: string; expression: string; timezone: string; onTick: (at: Date) => void }) {
    const record = { ...entry, stopped: false };
    this.entries.set(entry.name, record);
    return { stop: () => void (record.stopped = true) };
  }
  fire(name: string, at: Date): void {
    const entry = this.entries.get(name)!;
    if (!entry.stopped) entry.onTick(at);
  }
}

/** A pino logger writing parsed lines to an array. */
export function memoryLog() {
  const lines: Array<Record<string, unknown>> = [];
  const sink = new Writable({
    write(chunk: Buffer, _encoding, done) {
      for (const line of chunk.toString('utf8').split('\n').filter(Boolean)) lines.push(JSON.parse(line) as Record<string, unknown>);
      done();
    },
  });
  return { log: pino({ level: 'debug' }, sink), lines };
}

