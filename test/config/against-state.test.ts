/**
 * `validate --against-state`: flows compared with what the rollups in a real
 * state schema saw. The schema holds four weeks of rollups ending 2026-11-28,
 * in which `zone_selected` was renamed `zone_selectd` and the `view` values
 * of screen_shown are fully profiled; one older row sits outside the window.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { segmentsCheck } from '../../checks/segments/index.js';
import { EXIT } from '../../service/cli/exit-codes.js';
import { freePort } from '../../service/db/embedded.js';
import { migrate } from '../../service/db/migrate.js';
import { insertEventDays, insertParamDays, type ParamRowToWrite } from '../../service/state/rollups.js';
import { createTestSchema, type TestSchema } from '../helpers/db.js';
import { brokenCopy, replace, runValidate, snapshot, testChecks, type Changes } from './helpers.js';

const NEWEST = '2026-11-28';

let db: TestSchema;

function param(event: string, key: string, values: string[] | null): ParamRowToWrite {
  return {
    event,
    platform: 'web',
    version: '',
    key,
    jsonType: 'string',
    events: 100,
    distinctValues: values?.length ?? null,
    topValues: (values ?? []).map((value) => ({ value, events: 10 })),
    minNumber: null,
    maxNumber: null,
    fractional: 0,
  };
}

beforeAll(async () => {
  db = await createTestSchema('validate');
  await migrate(db.pool, db.schema);
  const count = (event: string) => ({ event, platform: 'web', version: '*', dimension: '', value: '', events: 100, people: 80 });
  await db.pool.query(insertEventDays(db.schema, '2026-10-01', [count('zone_selected')]));
  await db.pool.query(insertEventDays(db.schema, NEWEST, ['screen_shown', 'pass_purchase_result', 'signup_submitted', 'zone_selectd'].map(count)));
  await db.pool.query(
    insertParamDays(db.schema, NEWEST, [
      param('screen_shown', 'view', ['pass_intro', 'zone_picker', 'pay_review', 'signup_form']),
      param('pass_purchase_result', 'outcome', ['approved', 'declined', 'cancelled']),
      param('pass_purchase_result', 'order_id', null),
    ]),
  );
});

afterAll(async () => {
  await db.drop();
});

/** The base fixture pointed at the test schema, plus `changes`. */
function stateCopy(changes: Changes = {}) {
  return brokenCopy({
    'plumbline.yaml': replace('  url: ${PLUMBLINE_STATE_URL:-}\n', `  url: \${PLUMBLINE_STATE_URL:-}\n  schema: ${db.schema}\n`),
    ...changes,
  });
}

describe('validate --against-state', () => {
  it('warns about events, step parameters and step values the rollups never saw', async () => {
    const fixture = stateCopy({
      'flows/monthly-pass.yaml': replace('where: { view: zone_picker }', 'where: { view_name: zone_picker }'),
      'flows/account-signup.yaml': replace('event: signup_submitted', 'event: signup_submited'),
    });
    try {
      const before = await db.pool.query(`select count(*)::int as n from "${db.schema}".event_days`);
      const run = await runValidate(fixture, { againstState: true, env: { PLUMBLINE_STATE_URL: db.url } });
      expect(run.lines).toEqual([
        'config/flows/account-signup.yaml:5:31 warning: steps[1].event: expected an event the rollups saw (2026-11-01 to 2026-11-28), found "signup_submited" (did you mean signup_submitted?)',
        'config/flows/monthly-pass.yaml:6:49 warning: steps[1].where.view_name: expected a parameter of screen_shown the rollups saw (view), found "view_name"',
        'config/flows/monthly-pass.yaml:7:70 warning: steps[2].where.view[1]: expected a value of screen_shown.view the rollups saw (pass_intro, pay_review, signup_form, zone_picker), found "pay_review_v2" (did you mean pay_review?)',
        'config/flows/monthly-pass.yaml:12:9 warning: watch[0]: expected an event the rollups saw (2026-11-01 to 2026-11-28), found "zone_selected" (did you mean zone_selectd?)',
        'config: valid with 4 warnings (2 flows: account_signup, monthly_pass); compared with the rollups of 2026-11-01 to 2026-11-28',
      ]);
      expect(run.code).toBe(EXIT.ok);
      expect((await runValidate(fixture, { againstState: true, strict: true, env: { PLUMBLINE_STATE_URL: db.url } })).code).toBe(EXIT.warnings);
      expect((await db.pool.query(`select count(*)::int as n from "${db.schema}".event_days`)).rows).toEqual(before.rows);
    } finally {
      fixture.remove();
    }
  });

  it('judges values only when the rollups kept all of them, and only the days of the window', async () => {
    // order_id has too many values to profile; a 90-day window reaches back to zone_selected on 2026-10-01.
    const fixture = stateCopy({ 'flows/monthly-pass.yaml': replace('where: { outcome: approved }', 'where: { outcome: approved, order_id: A-17 }') });
    try {
      const run = await runValidate(fixture, { againstState: true, days: 90, env: { PLUMBLINE_STATE_URL: db.url } });
      expect(run.lines).toEqual([
        'config/flows/monthly-pass.yaml:7:70 warning: steps[2].where.view[1]: expected a value of screen_shown.view the rollups saw (pass_intro, pay_review, signup_form, zone_picker), found "pay_review_v2" (did you mean pay_review?)',
        'config/flows/monthly-pass.yaml:8:76 warning: steps[3].where.order_id: expected a parameter declared under events.pass_purchase_result.params (outcome, amount_cents), found "order_id"',
        'config: valid with 2 warnings (2 flows: account_signup, monthly_pass); compared with the rollups of 2026-08-31 to 2026-11-28',
      ]);
    } finally {
      fixture.remove();
    }
  });

  it('warns when a dimension has more values than the segments check watches', async () => {
    const wide = await createTestSchema('validate_wide');
    await migrate(wide.pool, wide.schema);
    const country = (value: string) => ({ event: 'screen_shown', platform: 'web', version: '*', dimension: 'country', value, events: 10, people: 8 });
    const seen = ['screen_shown', 'pass_purchase_result', 'signup_submitted', 'zone_selected'].map((event) => ({ event, platform: 'web', version: '*', dimension: '', value: '', events: 100, people: 80 }));
    await wide.pool.query(insertEventDays(wide.schema, NEWEST, [...seen, ...Array.from({ length: 60 }, (_, i) => country(`c${i}`))]));
    // monthly_pass watches up to 70 values of a dimension; account_signup keeps the default 50.
    const fixture = brokenCopy({
      'plumbline.yaml': replace('  url: ${PLUMBLINE_STATE_URL:-}\n', `  url: \${PLUMBLINE_STATE_URL:-}\n  schema: ${wide.schema}\n`),
      'flows/monthly-pass.yaml': replace('checks:\n', 'checks:\n  segments: { max_values: 70 }\n'),
    });
    try {
      const run = await runValidate(fixture, { againstState: true, checks: [...testChecks, segmentsCheck], env: { PLUMBLINE_STATE_URL: wide.url } });
      expect(run.lines.filter((line) => line.includes('segments'))).toEqual([
        'config/flows/account-signup.yaml:1:1 warning: checks.segments.max_values: expected at most 50 values of a dimension for the segments check to watch them all, found 60 values of country (2026-11-01 to 2026-11-28) (only its 50 largest values are watched; raise max_values or drop the dimension)',
      ]);
    } finally {
      fixture.remove();
      await wide.drop();
    }
  });

  it('says so when the state has no rollups yet', async () => {
    const empty = await createTestSchema('validate_empty');
    await migrate(empty.pool, empty.schema);
    const fixture = brokenCopy({
      'plumbline.yaml': replace('  url: ${PLUMBLINE_STATE_URL:-}\n', `  url: \${PLUMBLINE_STATE_URL:-}\n  schema: ${empty.schema}\n`),
    });
    try {
      const run = await runValidate(fixture, { againstState: true, env: { PLUMBLINE_STATE_URL: empty.url } });
      expect(run.errors).toEqual([`plumbline: the state schema ${empty.schema} has no rollups yet; events were not compared`]);
      expect(run.lines).toEqual(['config: valid (2 flows: account_signup, monthly_pass)']);
      expect(run.code).toBe(EXIT.ok);
    } finally {
      fixture.remove();
      await empty.drop();
    }
  });

  it('exits 3 when the state database cannot be reached, and writes nothing', async () => {
    const fixture = stateCopy();
    try {
      const before = snapshot(fixture.root);
      const url = `postgres://plumbline@127.0.0.1:${await freePort()}/state`;
      const run = await runValidate(fixture, { againstState: true, env: { PLUMBLINE_STATE_URL: url } });
      expect(run.code).toBe(EXIT.database);
      expect(run.errors[0]).toMatch(/^plumbline: cannot read the rollups in the state database: .*ECONNREFUSED/);
      expect(snapshot(fixture.root)).toEqual(before);
    } finally {
      fixture.remove();
    }
  });

  it('exits 3 when no state database is configured', async () => {
    const fixture = stateCopy();
    try {
      const run = await runValidate(fixture, { againstState: true });
      expect(run.code).toBe(EXIT.database);
      expect(run.errors).toEqual(['plumbline: --against-state needs a state database: set the variable named in state.url (or warehouse.url)']);
    } finally {
      fixture.remove();
    }
  });

  it('reports config errors without touching the database', async () => {
    const fixture = stateCopy({ 'flows/monthly-pass.yaml': replace('step_time_cap: 5m', 'step_time_cap: 45m') });
    try {
      const url = `postgres://plumbline@127.0.0.1:${await freePort()}/state`;
      const run = await runValidate(fixture, { againstState: true, env: { PLUMBLINE_STATE_URL: url } });
      expect(run.code).toBe(EXIT.config);
      expect(run.errors).toEqual([]);
    } finally {
      fixture.remove();
    }
  });
});
