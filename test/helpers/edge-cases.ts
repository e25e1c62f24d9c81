/**
 * A day of events full of edge cases, the same every run: ties at the same
 * instant, upgrades within the day, missing user or device ids, unmapped
 * platforms, every JSON type, long and non-ASCII values. The engine
 * comparisons (test/warehouse/) load it into each engine.
 */
import type { RawEvent } from './warehouse.js';

/** A seeded generator (mulberry32), so the edge-case day is the same every run. */
function random(seed: number): () => number {
  let a = seed;
  return () => {
    a = (a + 0x6d2b79f5) | 0;
    let t = Math.imul(a ^ (a >>> 15), 1 | a);
    t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t;
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Edge cases on the 2026 spring-forward day of America/New_York (23 hours), in the demo's events and parameters. */
export function edgeCaseDay(): RawEvent[] {
  const next = random(20261216);
  const pick = <T>(items: readonly T[]) => items[Math.floor(next() * items.length)]!;
  const start = Date.parse('2026-03-08T04:30:00Z');
  const values = [
    { view: 'pass_intro' },
    { view: 'zone_picker', extra: null },
    { view: 'rider_details', fare_zone: 'AB', rider_type: pick(['adult', 'student']) },
    { view: 'pay_review', amount_cents: 4850.5 },
    { view: 'signup_form', nested: { a: [1, 2] }, list: [true, null] },
    { outcome: 'approved', amount_cents: 9700, pass_type: 'monthly' },
    { outcome: 'declined', amount_cents: -3, test: true },
    { outcome: 'approved', amount_cents: '12' },
    { method: 'email', note: 'é'.repeat(70) },
    { method: 'google', note: 'naïve "quoted" \\ text' },
  ];
  const events: RawEvent[] = [];
  for (let person = 0; person < 400; person++) {
    const user = next() < 0.7 ? `u${person % 250}` : null;
    const device = next() < 0.9 ? `d${person}` : null;
    const platform = pick(['web', 'Android', 'iOS', 'kiosk']);
    let at = start + Math.floor(next() * 23 * 3600) * 1000;
    for (let k = 0; k < 1 + Math.floor(next() * 8); k++) {
      const props = pick(values);
      const name = 'view' in props ? 'screen_shown' : 'outcome' in props ? 'pass_purchase_result' : pick(['signup_submitted', 'email_verified']);
      events.push({
        at: new Date(at),
        name,
        user,
        device,
        platform,
        version: pick(['7.1.0', '7.2.0', null]),
        props: next() < 0.05 ? null : props,
        country: pick(['US', 'CA', null]),
        channel: pick(['direct', 'email']),
      });
      // Same instant now and then: ties are resolved by step, then byte order, on both engines.
      if (next() > 0.2) at += Math.floor(next() * 400) * 1000;
    }
  }
  return events;
}

