import { describe, expect, it } from 'vitest';
import { flowSchema } from '../../service/config/schema.js';
import { testChecks } from './helpers.js';

describe('per-platform check options', () => {
  const schema = flowSchema(testChecks);
  const flow = {
    flow: 'monthly_pass',
    owner: 'growth',
    steps: [
      { name: 'intro', event: 'screen_shown' },
      { name: 'done', event: 'pass_purchase_result' },
    ],
    conversion_window: '30m',
    step_time_cap: '5m',
    platforms: ['web', 'ios'],
  };

  it('an override changes only what it names; the rest keeps the flow-level values, not the defaults', () => {
    const parsed = schema.parse({ ...flow, checks: { volume: { max_drop: '40%', severity: 'page', per_platform: { ios: { max_drop: '60%' } } } } });
    const volume = parsed.checks.volume as { max_drop: number; severity: string; per_platform: Record<string, { max_drop: number; severity: string }> };
    expect(volume.max_drop).toBeCloseTo(0.4, 12);
    expect(volume.severity).toBe('page');
    expect(volume.per_platform.ios).toMatchObject({ max_drop: 0.6, severity: 'page' });
  });

  it('checks the override like the options themselves', () => {
    const result = schema.safeParse({ ...flow, checks: { volume: { per_platform: { ios: { max_drop: 'a lot' } } } } });
    expect(result.success).toBe(false);
    expect(JSON.stringify(result.error?.issues[0]?.path)).toBe('["checks","volume","per_platform","ios","max_drop"]');
  });
});
