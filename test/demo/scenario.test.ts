import { readFile, mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { toFlowDefinition, toWarehouseMapping } from '../../service/config/definitions.js';
import { loadConfig, type LoadedConfig } from '../../service/config/load.js';
import { quoteIdent } from '../../service/db/sql.js';
import { adoption, INCIDENT_DAYS, PLATFORMS, planDay } from '../../service/demo/model.js';
import {
  DEMO_FROM,
  DEMO_TIMEZONE,
  DEMO_TO,
  GROUND_TRUTH_FILE,
  generateScenario,
  groundTruth,
  groundTruthFor,
  writeGroundTruth,
  type ScenarioOptions,
} from '../../service/demo/scenario.js';
import { projectPath } from '../../service/paths.js';
import { PostgresWarehouse } from '../../service/warehouse/postgres/index.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';

/** Three weeks around the October month start, the Canadian declines and the Android 7.4.0 release. */
const FROM = '2026-09-28';
const TO = '2026-10-18';
const SCALE = 0.25;

let db: TestSchema;
let config: LoadedConfig;

const options = (table: string, extra: Partial<ScenarioOptions> = {}): ScenarioOptions => ({
  schema: db.schema,
  table,
  from: FROM,
  to: TO,
  scale: SCALE,
  ...extra,
});
const events = (table: string) => `${quoteIdent(db.schema)}.${quoteIdent(table)}`;
/** Local calendar day of an event, as plumbline cuts days. */
const localDay = `(occurred_at at time zone '${DEMO_TIMEZONE}')::date::text`;

async function rows<T extends pg.QueryResultRow>(text: string, values: unknown[] = []): Promise<T[]> {
  return (await db.pool.query<T>({ text, values })).rows;
}

/** A digest of a table's whole content, independent of physical row order. */
async function digest(table: string, where = 'true'): Promise<{ n: number; md5: string }> {
  const [row] = await rows<{ n: string; md5: string }>(
    `select count(*) as n, md5(string_agg(e::text, '|' order by e::text)) as md5 from ${events(table)} e where ${where}`,
  );
  return { n: Number(row!.n), md5: row!.md5 };
}

beforeAll(async () => {
  db = await createTestSchema('demo');
  config = loadConfig(projectPath('config'));
  const progress: Array<[number, number, string]> = [];
  await generateScenario(db.pool, options('events'), (done, total, label) => progress.push([done, total, label]));
  await generateScenario(db.pool, options('events_clean', { incidents: false }));
  expect(progress).toHaveLength(22);
  expect(progress.map(([done]) => done)).toEqual([...Array.from({ length: 21 }, (_, i) => i + 1), 21]);
  expect(progress.at(-1)).toEqual([21, 21, 'index']);
});

afterAll(async () => {
  await db?.drop();
});

describe('the demo scenario matches the demo config', () => {
  it('uses the configured timezone, table columns and raw platform values', async () => {
    expect(config.main.timezone).toBe(DEMO_TIMEZONE);
    const mapping = config.main.warehouse.platforms;
    for (const platform of PLATFORMS) expect(mapping[platform.id]).toEqual([platform.raw]);
    const columns = await rows<{ column_name: string; data_type: string }>(
      `select column_name, data_type from information_schema.columns where table_schema = $1 and table_name = 'events' order by ordinal_position`,
      [db.schema],
    );
    const configured = config.main.warehouse.columns;
    const names = columns.map((c) => c.column_name);
    for (const column of [...Object.values(configured), ...config.main.warehouse.dimensions]) expect(names).toContain(column);
    expect(columns.find((c) => c.column_name === configured.time)?.data_type).toBe('timestamp with time zone');
    expect(columns.find((c) => c.column_name === configured.params)?.data_type).toBe('jsonb');
    const [index] = await rows<{ n: string }>(`select count(*) as n from pg_indexes where schemaname = $1 and tablename = 'events' and indexdef like '%(occurred_at)%'`, [
      db.schema,
    ]);
    expect(Number(index!.n)).toBe(1);
  });

  it('respects every declared parameter contract on clean data', async () => {
    for (const { config: flow } of config.flows) {
      for (const [event, declaration] of Object.entries(flow.events)) {
        const [total] = await rows<{ n: string }>(`select count(*) as n from ${events('events_clean')} where event_name = $1`, [event]);
        expect(Number(total!.n), `${event} is generated`).toBeGreaterThan(100);
        for (const [key, contract] of Object.entries(declaration.params)) {
          const type = contract.type === 'integer' ? 'number' : contract.type;
          const [bad] = await rows<{ missing: string; mistyped: string; off_enum: string; out_of_range: string }>(
            `select
               count(*) filter (where not props ? $2) as missing,
               count(*) filter (where props ? $2 and (jsonb_typeof(props -> $2) <> $3
                 or ($4 and (props ->> $2)::numeric <> trunc((props ->> $2)::numeric)))) as mistyped,
               count(*) filter (where props ? $2 and $5::text[] is not null and not (props ->> $2 = any($5::text[]))) as off_enum,
               count(*) filter (where props ? $2 and jsonb_typeof(props -> $2) = 'number'
                 and ((props ->> $2)::numeric < $6 or (props ->> $2)::numeric > $7)) as out_of_range
             from ${events('events_clean')} where event_name = $1`,
            [event, key, type, contract.type === 'integer', contract.enum?.map(String) ?? null, contract.min ?? null, contract.max ?? null],
          );
          const label = `${event}.${key}`;
          if (contract.required) expect(Number(bad!.missing), `${label} missing`).toBe(0);
          expect(Number(bad!.mistyped), `${label} mistyped`).toBe(0);
          expect(Number(bad!.off_enum), `${label} off enum`).toBe(0);
          expect(Number(bad!.out_of_range), `${label} out of range`).toBe(0);
        }
      }
    }
  });

  it('reaches every step of every flow on every platform, in order, through the rollup funnel query', async () => {
    const warehouse = new PostgresWarehouse(db.pool, { ...toWarehouseMapping(config.main), table: `${db.schema}.events_clean` }, { workMem: '64MB', statementTimeoutSeconds: 600 });
    const range = await warehouse.dayBounds('2026-10-07', DEMO_TIMEZONE);
    for (const { config: flowConfig } of config.flows) {
      const flow = toFlowDefinition(flowConfig);
      const { funnel } = await warehouse.flow(flow, range);
      for (const platform of flow.platforms) {
        const row = funnel.find((r) => r.platform === platform && r.version === '*' && r.dimension === '');
        const reached = row!.reached;
        expect(reached[0], `${flow.id} ${platform} entrants`).toBeGreaterThan(20);
        for (let step = 1; step < reached.length; step++) {
          const rate = reached[step]! / reached[step - 1]!;
          expect(rate, `${flow.id} ${platform} step ${step}`).toBeGreaterThan(0.5);
          expect(rate, `${flow.id} ${platform} step ${step}`).toBeLessThan(0.97);
        }
      }
    }
  });

  it('identifies people by user id or device: web about half anonymous, apps mostly signed in', async () => {
    const shares = await rows<{ platform: string; anonymous: number }>(
      `select platform, avg((user_id is null)::int)::float8 as anonymous
       from ${events('events_clean')} where event_name = 'screen_shown' and props ->> 'view' = 'pass_intro' group by platform`,
    );
    const by = Object.fromEntries(shares.map((s) => [s.platform, s.anonymous]));
    expect(by.web).toBeGreaterThan(0.4);
    expect(by.web).toBeLessThan(0.6);
    expect(by.Android).toBeLessThan(0.15);
    const [devices] = await rows<{ n: string }>(
      `select count(*) as n from (select user_id from ${events('events_clean')} where user_id is not null group by user_id having count(distinct device_id) > 1) x`,
    );
    expect(Number(devices!.n)).toBeGreaterThan(0);
    const [nulls] = await rows<{ n: string }>(`select count(*) as n from ${events('events_clean')} where device_id is null or country is null or channel is null`);
    expect(Number(nulls!.n)).toBe(0);
    const [web] = await rows<{ n: string }>(`select count(*) as n from ${events('events_clean')} where platform = 'web' and app_version is not null`);
    expect(Number(web!.n)).toBe(0);
  });
});

describe('shape', () => {
  /** People entering the pass funnel per local day and platform. */
  async function entrants(table: string): Promise<Map<string, number>> {
    const result = await rows<{ day: string; platform: string; people: string }>(
      `select ${localDay} as day, platform, count(distinct coalesce('u:' || user_id, 'd:' || device_id)) as people
       from ${events(table)} where event_name = 'screen_shown' and props ->> 'view' = 'pass_intro' group by 1, 2`,
    );
    return new Map(result.map((r) => [`${r.day} ${r.platform}`, Number(r.people)]));
  }

  it('is lower at weekends and peaks at the month start', async () => {
    const people = await entrants('events_clean');
    for (const platform of PLATFORMS) {
      const at = (day: string) => people.get(`${day} ${platform.raw}`)!;
      const weekdays = ['2026-10-06', '2026-10-07', '2026-10-08', '2026-10-13', '2026-10-14', '2026-10-15'].map(at);
      const typical = weekdays.reduce((a, b) => a + b) / weekdays.length;
      for (const weekend of ['2026-10-03', '2026-10-04', '2026-10-10', '2026-10-11']) expect(at(weekend) / typical, `${platform.id} ${weekend}`).toBeLessThan(0.8);
      for (const monthStart of ['2026-10-01', '2026-10-02']) expect(at(monthStart) / typical, `${platform.id} ${monthStart}`).toBeGreaterThan(1.4);
      // Poisson-ish day-to-day noise, not a smooth curve.
      expect(new Set(weekdays).size).toBe(weekdays.length);
    }
  });

  it('has gaps beyond the step time cap, completions after the window, journeys past midnight and out-of-order steps', async () => {
    const [row] = await rows<{ long_gaps: string; late: string; past_midnight: string; out_of_order: string; repeats: string; journeys: string }>(
      `with steps as (
         select coalesce('u:' || user_id, 'd:' || device_id) as person, platform, ${localDay} as day, occurred_at as at,
                case when event_name = 'screen_shown' then props ->> 'view' else event_name end as step
         from ${events('events_clean')}
         where event_name in ('screen_shown', 'pass_purchase_result')
       ),
       per as (
         select person, platform,
                min(at) filter (where step = 'pass_intro') as intro,
                min(at) filter (where step = 'zone_picker') as zone,
                min(at) filter (where step = 'rider_details') as rider,
                min(at) filter (where step = 'pay_review') as review,
                min(at) filter (where step = 'pass_purchase_result') as done,
                count(*) filter (where step = 'pass_intro') as intros
         from steps where day = '2026-10-07' or (day = '2026-10-08' and step <> 'pass_intro') group by 1, 2
       )
       select count(*) filter (where rider - zone > interval '5 minutes' or review - rider > interval '5 minutes') as long_gaps,
              count(*) filter (where done - intro > interval '30 minutes') as late,
              count(*) filter (where (done at time zone '${DEMO_TIMEZONE}')::date > (intro at time zone '${DEMO_TIMEZONE}')::date) as past_midnight,
              count(*) filter (where rider < zone) as out_of_order,
              count(*) filter (where intros > 1) as repeats,
              count(*) filter (where intro is not null) as journeys
       from per where intro is not null and (intro at time zone '${DEMO_TIMEZONE}')::date = '2026-10-07'`,
    );
    const journeys = Number(row!.journeys);
    expect(journeys).toBeGreaterThan(500);
    expect(Number(row!.long_gaps)).toBeGreaterThan(0);
    expect(Number(row!.long_gaps) / journeys).toBeLessThan(0.1);
    expect(Number(row!.late)).toBeGreaterThan(0);
    expect(Number(row!.past_midnight)).toBeGreaterThan(0);
    expect(Number(row!.out_of_order)).toBeGreaterThan(0);
    expect(Number(row!.repeats)).toBeGreaterThan(0);
  });

  it('rolls new app versions out over about a week', async () => {
    const shares = await rows<{ day: string; share: number }>(
      `select ${localDay} as day, avg((app_version = '7.4.0')::int)::float8 as share
       from ${events('events_clean')} where platform = 'Android' and event_name = 'app_open' group by 1 order by 1`,
    );
    const share = (day: string) => shares.find((s) => s.day === day)!.share;
    expect(share('2026-10-12')).toBe(0);
    expect(share('2026-10-13')).toBeGreaterThan(0.01);
    expect(share('2026-10-13')).toBeLessThan(0.12);
    expect(share('2026-10-16')).toBeGreaterThan(0.3);
    expect(share('2026-10-18')).toBeGreaterThan(0.7);
    expect(share('2026-10-18')).toBeLessThan(0.95);
  });

  it('follows the planned adoption curve and holiday dip', () => {
    expect(adoption(-1, 0.9)).toBe(0);
    expect(adoption(0, 0.93)).toBeGreaterThan(0.03);
    expect(adoption(0, 0.93)).toBeLessThan(0.07);
    expect(adoption(7, 0.93)).toBeGreaterThan(0.88);
    const switches = { scale: 10, seed: 1, incidents: true, to: DEMO_TO };
    const total = (day: string) => planDay(day, switches).platforms.reduce((sum, p) => sum + p.journeys.pass + p.journeys.other, 0);
    const ratio = total(INCIDENT_DAYS.laborDay) / ((total('2026-08-31') + total('2026-09-14')) / 2);
    expect(ratio).toBeGreaterThan(0.45);
    expect(ratio).toBeLessThan(0.65);
  });
});

describe('determinism', () => {
  it('gives identical data for the same seed and different data for another', async () => {
    const short = { from: '2026-10-05', to: '2026-10-07' };
    await generateScenario(db.pool, options('again', short));
    await generateScenario(db.pool, options('again_other_split', { ...short, concurrency: 1 }));
    await generateScenario(db.pool, options('other_seed', { ...short, seed: 99 }));
    const middle = `${localDay} = '2026-10-06' and (occurred_at at time zone '${DEMO_TIMEZONE}')::time between '00:10' and '23:50'`;
    const again = await digest('again', middle);
    expect(again.n).toBeGreaterThan(1000);
    // A day comes out the same whether generated alone or as part of a longer range.
    expect(again).toEqual(await digest('events', middle));
    expect(await digest('again_other_split')).toEqual(await digest('again'));
    expect((await digest('other_seed', middle)).md5).not.toBe(again.md5);
  });

  it('injects incidents surgically: a day no incident touches is the same with or without them', async () => {
    const quiet = `${localDay} = '2026-09-30'`;
    expect(await digest('events', quiet)).toEqual(await digest('events_clean', quiet));
    const touched = `${localDay} = '2026-10-06'`;
    expect((await digest('events', touched)).md5).not.toBe((await digest('events_clean', touched)).md5);
  });
});

describe('injected incidents', () => {
  it('android 7.4.0 sends no rider_details, other versions and the clean run do', async () => {
    const counts = await rows<{ table: string; version: string; zone: string; rider: string }>(
      `select t as table, app_version as version,
              count(*) filter (where props ->> 'view' = 'zone_picker') as zone,
              count(*) filter (where props ->> 'view' = 'rider_details') as rider
       from (select 'events' as t, * from ${events('events')} union all select 'clean', * from ${events('events_clean')}) e
       where platform = 'Android' and event_name = 'screen_shown' and ${localDay} >= '2026-10-13'
       group by 1, 2`,
    );
    const find = (table: string, version: string) => counts.find((c) => c.table === table && c.version === version)!;
    expect(Number(find('events', '7.4.0').zone)).toBeGreaterThan(100);
    expect(Number(find('events', '7.4.0').rider)).toBe(0);
    expect(Number(find('events', '7.3.0').rider)).toBeGreaterThan(100);
    expect(Number(find('clean', '7.4.0').rider) / Number(find('clean', '7.4.0').zone)).toBeGreaterThan(0.7);
  });

  it('declines most Canadian payments on 2026-10-05..07 only', async () => {
    const shares = await rows<{ window: boolean; country: string; declined: number }>(
      `select ${localDay} between $1 and $2 as window, country = 'CA' as country,
              avg((props ->> 'outcome' = 'declined')::int)::float8 as declined
       from ${events('events')} where event_name = 'pass_purchase_result' group by 1, 2`,
      [INCIDENT_DAYS.canadaDeclines.from, INCIDENT_DAYS.canadaDeclines.to],
    );
    const share = (window: boolean, canada: boolean) => shares.find((s) => s.window === window && String(s.country) === String(canada))!.declined;
    expect(share(true, true)).toBeGreaterThan(0.55);
    expect(share(false, true)).toBeLessThan(0.2);
    expect(share(true, false)).toBeLessThan(0.2);
  });

  it('stops the newest day at 14:00 local time when the collector is delayed', async () => {
    const range = { from: '2026-11-29', to: INCIDENT_DAYS.collectorDelay, scale: 0.1 };
    await generateScenario(db.pool, options('delayed', range));
    await generateScenario(db.pool, options('delayed_clean', { ...range, incidents: false }));
    const newest = async (table: string) =>
      await rows<{ day: string; platform: string; newest: string }>(
        `select ${localDay} as day, platform, max((occurred_at at time zone '${DEMO_TIMEZONE}')::time)::text as newest from ${events(table)} group by 1, 2`,
      );
    const delayed = await newest('delayed');
    for (const platform of PLATFORMS) {
      expect(delayed.find((r) => r.day === '2026-11-30' && r.platform === platform.raw)!.newest < '14:00').toBe(true);
      expect(delayed.find((r) => r.day === '2026-11-30' && r.platform === platform.raw)!.newest > '13:00').toBe(true);
      expect(delayed.find((r) => r.day === '2026-11-29' && r.platform === platform.raw)!.newest > '23:00').toBe(true);
    }
    const [late] = await rows<{ n: string }>(`select count(*) as n from ${events('delayed')} where occurred_at >= $1`, ['2026-11-30T19:00:00Z']);
    expect(Number(late!.n)).toBe(0);
    const clean = await newest('delayed_clean');
    expect(clean.filter((r) => r.day === '2026-11-30').every((r) => r.newest > '23:00')).toBe(true);
  });

  it('refuses to overwrite an existing table unless asked, and rejects a bad scale', async () => {
    await expect(generateScenario(db.pool, options('events'))).rejects.toThrow(/already exists/);
    await expect(generateScenario(db.pool, options('bad', { scale: 0 }))).rejects.toThrow(/scale/);
  });
});

describe('ground truth', () => {
  it('lists the incidents and both holidays, apart from each other and from month starts', () => {
    expect(groundTruth.map((incident) => incident.id).sort()).toEqual(
      [
        'android_duplicate_firing',
        'android_release_drops_step',
        'collector_delay',
        'ios_release_renames_param',
        'public_holiday',
        'public_holiday_thanksgiving',
        'segment_payment_declines',
        'web_event_outage',
      ].sort(),
    );
    for (const incident of groundTruth) {
      expect(incident.firstDay <= incident.lastDay).toBe(true);
      expect(incident.firstDay >= DEMO_FROM && incident.lastDay <= DEMO_TO).toBe(true);
      expect(['01', '02']).not.toContain(incident.firstDay.slice(8));
      expect(incident.expectedChecks.length).toBeGreaterThan(0);
      if (incident.expectedCause === 'release') expect(incident.causeVersion).toBe(incident.version);
    }
    const declared = config.main.calendar.flatMap((entry) => (entry.date ? [entry.date] : []));
    for (const holiday of groundTruth.filter((incident) => incident.expectedCause === 'calendar')) expect(declared).toContain(holiday.firstDay);
    // The collector delay sits on the newest day, under whatever is still ongoing then.
    const spans = groundTruth.filter((incident) => incident.kind !== 'holiday' && incident.kind !== 'collector_delay');
    for (const a of spans) for (const b of spans) if (a !== b) expect(a.lastDay < b.firstDay || b.lastDay < a.firstDay, `${a.id} / ${b.id}`).toBe(true);
  });

  it('keeps only the holidays on clean data, and only what a range covers', () => {
    expect(groundTruthFor({ from: DEMO_FROM, to: DEMO_TO, incidents: false }).map((i) => i.kind)).toEqual(['holiday', 'holiday']);
    const short = groundTruthFor({ from: FROM, to: TO, incidents: true });
    expect(short.map((i) => i.id).sort()).toEqual(['android_release_drops_step', 'segment_payment_declines']);
    expect(short.find((i) => i.id === 'android_release_drops_step')!.lastDay).toBe(TO);
  });

  it('is written as JSON beside the data', async () => {
    const dir = await mkdtemp(join(tmpdir(), 'plumbline-truth-'));
    try {
      const file = await writeGroundTruth(dir);
      expect(file).toBe(join(dir, GROUND_TRUTH_FILE));
      const written = JSON.parse(await readFile(file, 'utf8')) as { incidents: unknown[]; timezone: string; from: string; to: string };
      expect(written.incidents).toEqual(JSON.parse(JSON.stringify(groundTruth)));
      expect(written).toMatchObject({ timezone: DEMO_TIMEZONE, from: DEMO_FROM, to: DEMO_TO });
    } finally {
      await rm(dir, { recursive: true, force: true });
    }
  });
});
