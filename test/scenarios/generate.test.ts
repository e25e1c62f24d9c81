/**
 * The set-based generator against its plan, in PostgreSQL: journeys per day
 * come out exactly as planned, and each injected fault is in the rows where
 * and only where the plan put it (a release's dropped step, a renamed key, an
 * event sent twice, a day loaded twice, late rows held back until they
 * arrive, the newest day cut short).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { quoteIdent, quoteQualified } from '../../service/db/sql.js';
import type { Injection } from '../../service/scenarios/catalogue.js';
import { arriveQuery, generateEvents, journeyCounts, LATE_TABLE } from '../../service/scenarios/generate.js';
import { COMPACT, dayOf, drawScenario, type Scenario } from '../../service/scenarios/model.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';

/** A compact scenario with web and an app platform with a release, and faults placed by hand. */
function plannedScenario(): { scenario: Scenario; app: number; web: number; release: string; releaseDay: number } {
  for (let seed = 1; ; seed++) {
    const scenario = drawScenario(seed, COMPACT);
    const web = scenario.platforms.findIndex((p) => p.kind === 'web');
    const app = scenario.platforms.findIndex((p) => p.releases.some((r) => r.firstDay > 20 && r.firstDay < 40));
    const flow = scenario.flows[0]!;
    const keyed = scenario.events[flow.steps[1]!.event]?.params.length ?? 0;
    if (web < 0 || app < 0 || flow.steps[0]!.event === flow.steps[1]!.event || keyed === 0) continue;
    const release = scenario.platforms[app]!.releases.find((r) => r.firstDay > 20 && r.firstDay < 40)!;
    const step = flow.steps[1]!;
    const last = scenario.days - 1;
    const injections: Injection[] = [
      { kind: 'drop_step', platform: scenario.platforms[app]!.index, version: release.version, event: step.event, where: step.where, fraction: 1 },
      { kind: 'rename_param', platform: scenario.platforms[app]!.index, versions: [release.version], event: step.event, key: scenario.events[step.event]!.params[0]!.key, to: 'renamed_key' },
      { kind: 'event_twice', platform: scenario.platforms[web]!.index, event: flow.steps[0]!.event, from: 30, to: 31 },
      { kind: 'double_load', day: 40 },
      { kind: 'late_rows', day: 45, platform: scenario.platforms[web]!.index, share: 0.5, arrives: 47 },
      { kind: 'early_stop', day: last, hour: 12 },
    ];
    return { scenario: { ...scenario, injections, truths: [], calendar: [] }, app, web, release: release.version, releaseDay: release.firstDay };
  }
}

describe('scenario generator in PostgreSQL', () => {
  let db: TestSchema;
  const planned = plannedScenario();
  const { scenario } = planned;
  const c = scenario.columns;
  const table = () => quoteQualified(`${db.schema}.${scenario.table}`);
  const flow = scenario.flows[0]!;
  const raw = (index: number) => scenario.platforms[index]!.raw.map((r) => r.value);
  /** Rows of `event` (with the step's `where`) per local day on a platform. */
  const perDay = async (event: string, where: string | null, platform: number, extra = 'true') => {
    const key = scenario.events[event]?.whereKey;
    const { rows } = await db.pool.query<{ day: string; n: number }>({
      text: `select to_char((${quoteIdent(c.time)} at time zone $1)::date, 'YYYY-MM-DD') as day, count(*)::int as n from ${table()}
        where ${quoteIdent(c.name)} = $2 and ${quoteIdent(c.platform)} = any($3) and ($4::text is null or ${quoteIdent(c.params)}->>$5 = $4) and ${extra}
        group by 1`,
      values: [scenario.timezone, event, raw(platform), where, key ?? ''],
    });
    return new Map(rows.map((r) => [r.day, r.n]));
  };

  beforeAll(async () => {
    db = await createTestSchema('gen');
    await generateEvents(db.pool, scenario, db.schema);
  });
  afterAll(async () => db?.drop());

  it('makes exactly the planned journeys: one entry event per journey and day', async () => {
    const counts = journeyCounts(scenario);
    const entries = await perDay(flow.steps[0]!.event, flow.steps[0]!.where, planned.app);
    for (let day = 0; day < scenario.days - 1; day++) {
      if ([40, 45].includes(day)) continue;
      expect(entries.get(dayOf(scenario, day)) ?? 0, dayOf(scenario, day)).toBe(counts[0]![planned.app]![day]);
    }
  });

  it("drops the step and renames the key in the release's rows only", async () => {
    const step = flow.steps[1]!;
    const version = `${quoteIdent(c.version)} = '${planned.release}'`;
    const dropped = await perDay(step.event, step.where, planned.app, version);
    expect([...dropped.values()].reduce((a, b) => a + b, 0)).toBe(0);
    const others = await perDay(step.event, step.where, planned.app, `${quoteIdent(c.version)} <> '${planned.release}'`);
    expect([...others.values()].reduce((a, b) => a + b, 0)).toBeGreaterThan(0);
    const { rows } = await db.pool.query<{ renamed: number; kept: number }>(
      `select count(*) filter (where ${quoteIdent(c.params)} ? 'renamed_key')::int as renamed, count(*) filter (where not ${quoteIdent(c.params)} ? 'renamed_key')::int as kept
       from ${table()} where ${quoteIdent(c.name)} = '${step.event}' and ${quoteIdent(c.platform)} = any(array[${raw(planned.app).map((r) => `'${r}'`).join(',')}]) and ${version}`,
    );
    // The step's own rows are dropped; other steps or flows sending the event from the release carry the new key only.
    expect(rows[0]!.kept).toBe(0);
  });

  it('sends the web entry event twice on its two days only', async () => {
    const entries = await perDay(flow.steps[0]!.event, flow.steps[0]!.where, planned.web);
    const counts = journeyCounts(scenario);
    expect(entries.get(dayOf(scenario, 30))).toBe(2 * counts[0]![planned.web]![30]!);
    expect(entries.get(dayOf(scenario, 31))).toBe(2 * counts[0]![planned.web]![31]!);
    expect(entries.get(dayOf(scenario, 32))).toBe(counts[0]![planned.web]![32]);
  });

  it('loads day 40 twice, holds back half of one platform of day 45 until day 47, and cuts the newest day at noon', async () => {
    const { rows: twice } = await db.pool.query<{ rows: number; distinct: number }>({
      text: `select count(*)::int as rows, count(distinct t.*)::int as distinct from ${table()} t
        where ${quoteIdent(c.time)} >= ($1::date)::timestamp at time zone $2 and ${quoteIdent(c.time)} < ($1::date + 1)::timestamp at time zone $2`,
      values: [dayOf(scenario, 40), scenario.timezone],
    });
    expect(twice[0]!.rows).toBe(2 * twice[0]!.distinct);

    const late = async () => (await db.pool.query<{ n: number; arrives: number[] }>(`select count(*)::int as n, array_agg(distinct arrives) as arrives from ${quoteQualified(`${db.schema}.${LATE_TABLE}`)}`)).rows[0]!;
    const held = await late();
    expect(held.arrives).toEqual([47]);
    const before = await perDay(flow.steps[0]!.event, flow.steps[0]!.where, planned.web);
    await db.pool.query(arriveQuery(scenario, db.schema, 46));
    expect((await late()).n).toBe(held.n);
    await db.pool.query(arriveQuery(scenario, db.schema, 47));
    expect((await late()).n).toBe(0);
    const after = await perDay(flow.steps[0]!.event, flow.steps[0]!.where, planned.web);
    const day45 = dayOf(scenario, 45);
    expect(after.get(day45)).toBe(journeyCounts(scenario)[0]![planned.web]![45]);
    // About half the devices' rows were late (hash-chosen shard of 512 of 1024).
    expect(before.get(day45)! / after.get(day45)!).toBeGreaterThan(0.3);
    expect(before.get(day45)! / after.get(day45)!).toBeLessThan(0.7);

    const { rows: newest } = await db.pool.query<{ latest: string }>({
      text: `select to_char(max(${quoteIdent(c.time)}) at time zone $2, 'HH24:MI') as latest from ${table()}
        where ${quoteIdent(c.time)} >= ($1::date)::timestamp at time zone $2 and ${quoteIdent(c.time)} < ($1::date + 1)::timestamp at time zone $2`,
      values: [dayOf(scenario, scenario.days - 1), scenario.timezone],
    });
    expect(newest[0]!.latest < '12:00').toBe(true);
  });
});
