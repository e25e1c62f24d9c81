/** `serve` logs and counts a rejection nobody handled and keeps running; an uncaught exception is logged and exits 70. */
import { EventEmitter } from 'node:events';
import { describe, expect, it } from 'vitest';
import { EXIT } from '../../service/cli/exit-codes.js';
import { createMetrics } from '../../service/metrics.js';
import { watchUnhandled, type ProcessEvents } from '../../service/cli/unhandled.js';
import { memoryLog } from '../scheduler/helpers.js';

describe('watchUnhandled', () => {
  it('logs and counts rejections, exits with the internal code on an uncaught exception, and can be removed', async () => {
    const target = new EventEmitter();
    const { log, lines } = memoryLog();
    const metrics = createMetrics();
    const exits: number[] = [];
    const stop = watchUnhandled(target as unknown as ProcessEvents, log, metrics, (code) => exits.push(code));
    target.emit('unhandledRejection', new Error('lost write'));
    target.emit('unhandledRejection', 'a string reason');
    expect(exits).toEqual([]);
    target.emit('uncaughtException', new Error('boom'));
    expect(exits).toEqual([EXIT.internal]);
    expect(lines.filter((line) => String(line.msg).startsWith('unhandled promise rejection'))).toHaveLength(2);
    const counted = await metrics.registry.getSingleMetric('plumbline_unhandled_errors_total')!.get();
    expect(counted.values).toContainEqual({ value: 2, labels: { kind: 'rejection' } });
    expect(counted.values).toContainEqual({ value: 1, labels: { kind: 'exception' } });
    stop();
    expect(target.listenerCount('unhandledRejection')).toBe(0);
    expect(target.listenerCount('uncaughtException')).toBe(0);
  });
});
