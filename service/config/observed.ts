/**
 * `validate --against-state`: the flows' events, step parameters and step
 * values compared with what the rollups in the state schema have seen, to
 * catch a step that names an event nobody sends (a typo, or a rename in the
 * apps), and dimensions with more values than the `segments` check watches.
 * Reads `event_days` and `param_days` only, in a read-only transaction.
 */
import pg from 'pg';
import { quoteIdent, type Query } from '../db/sql.js';
import { TOP_VALUES, VALUE_MAX_LENGTH } from '../warehouse/mapping.js';
import { flowEvents, type Checked } from './cross-check.js';
import { addDays } from './definitions.js';
import { closest, pathToKey, type ConfigProblem } from './problems.js';
import type { FlowConfig } from './schema.js';

/** What the rollups saw in the days from `from` to `to`. */
export interface Observed {
  from: string;
  to: string;
  events: Set<string>;
  /** Parameter keys per profiled event; each key's values when the rollups kept all of them, else null. */
  params: Map<string, Map<string, Set<string> | null>>;
  /** Distinct values seen per configured dimension. */
  dimensionValues: Map<string, number>;
}

export function newestRollupDayQuery(schema: string): Query {
  return { text: `select to_char(max(day), 'YYYY-MM-DD') as newest from ${quoteIdent(schema)}.event_days`, values: [] };
}

export function observedEventsQuery(schema: string, to: string, days: number): Query {
  return {
    text: `select distinct event from ${quoteIdent(schema)}.event_days where day > $1::date - $2::int and day <= $1::date`,
    values: [to, days],
  };
}

export function observedDimensionValuesQuery(schema: string, to: string, days: number): Query {
  return {
    text: `select dimension, count(distinct value)::int as values
      from ${quoteIdent(schema)}.event_days
      where day > $1::date - $2::int and day <= $1::date and dimension <> ''
      group by dimension`,
    values: [to, days],
  };
}

/**
 * Keys seen per event, with their values when every row's profile listed all
 * of them (a key with at most TOP_VALUES distinct values a day has them all in
 * `top_values`).
 */
export function observedParamsQuery(schema: string, to: string, days: number, events: string[]): Query {
  return {
    text: `select p.event, p.key,
        bool_and(p.distinct_values is not null and p.distinct_values <= $3) as complete,
        coalesce(array_agg(distinct top.item ->> 'value') filter (where top.item is not null), '{}') as values
      from ${quoteIdent(schema)}.param_days p
      left join lateral jsonb_array_elements(p.top_values) as top(item) on true
      where p.day > $1::date - $2::int and p.day <= $1::date and p.event = any($4::text[])
      group by p.event, p.key`,
    values: [to, days, TOP_VALUES, events],
  };
}

/** Reads what the last `days` rolled-up days saw of `events`; undefined when the state has no rollups yet. */
export async function readObserved(url: string, schema: string, days: number, events: string[]): Promise<Observed | undefined> {
  const client = new pg.Client({ connectionString: url, application_name: 'plumbline-validate', connectionTimeoutMillis: 15_000 });
  await client.connect();
  try {
    await client.query('begin read only');
    const { rows } = await client.query<{ newest: string | null }>(newestRollupDayQuery(schema));
    const to = rows[0]?.newest;
    if (!to) return undefined;
    const seen = await client.query<{ event: string }>(observedEventsQuery(schema, to, days));
    const params = await client.query<{ event: string; key: string; complete: boolean; values: string[] }>(observedParamsQuery(schema, to, days, events));
    const dimensions = await client.query<{ dimension: string; values: number }>(observedDimensionValuesQuery(schema, to, days));
    const observed: Observed = {
      from: addDays(to, 1 - days),
      to,
      events: new Set(seen.rows.map((row) => row.event)),
      params: new Map(),
      dimensionValues: new Map(dimensions.rows.map((row) => [row.dimension, row.values])),
    };
    for (const row of params.rows) {
      const keys = observed.params.get(row.event) ?? new Map<string, Set<string> | null>();
      keys.set(row.key, row.complete ? new Set(row.values) : null);
      observed.params.set(row.event, keys);
    }
    return observed;
  } finally {
    await client.query('rollback').catch(() => undefined);
    await client.end();
  }
}

/**
 * Warnings for events, step parameters and step values the rollups never saw.
 * Parameters are judged only for events whose parameters were profiled in the
 * window (profiles cover watched events only), values only when the rollups
 * kept every value of the key.
 */
export function compareWithObserved(flows: readonly Checked<FlowConfig>[], observed: Observed): ConfigProblem[] {
  const problems: ConfigProblem[] = [];
  const window = `${observed.from} to ${observed.to}`;
  const warn = (flow: Checked<FlowConfig>, path: PropertyKey[], at: 'key' | 'value', problem: { expected: string; found: string; hint?: string }) =>
    problems.push({ file: flow.source.name, ...flow.source.position(path, at), key: pathToKey(path), severity: 'warning', ...problem });
  const unseenEvent = (flow: Checked<FlowConfig>, path: PropertyKey[], at: 'key' | 'value', event: string) => {
    const suggestion = closest(event, observed.events);
    warn(flow, path, at, {
      expected: `an event the rollups saw (${window})`,
      found: `"${event}"`,
      hint: suggestion ? `did you mean ${suggestion}?` : 'renamed in the apps, or not sent yet?',
    });
  };

  for (const flow of flows) {
    const { config } = flow;
    config.steps.forEach((step, index) => {
      if (!observed.events.has(step.event)) {
        unseenEvent(flow, ['steps', index, 'event'], 'value', step.event);
        return;
      }
      const keys = observed.params.get(step.event);
      if (!keys) return;
      for (const [key, wanted] of Object.entries(step.where)) {
        const path = ['steps', index, 'where', key];
        const values = keys.get(key);
        if (values === undefined) {
          const suggestion = closest(key, keys.keys());
          warn(flow, path, 'key', {
            expected: `a parameter of ${step.event} the rollups saw (${listed([...keys.keys()])})`,
            found: `"${key}"`,
            ...(suggestion ? { hint: `did you mean ${suggestion}?` } : {}),
          });
          continue;
        }
        if (values === null) continue;
        const list = Array.isArray(wanted) ? wanted : [wanted];
        list.forEach((value, valueIndex) => {
          const text = String(value).slice(0, VALUE_MAX_LENGTH);
          if (values.has(text)) return;
          const suggestion = closest(text, values);
          warn(flow, Array.isArray(wanted) ? [...path, valueIndex] : path, 'value', {
            expected: `a value of ${step.event}.${key} the rollups saw (${listed([...values])})`,
            found: JSON.stringify(value),
            hint: suggestion ? `did you mean ${suggestion}?` : 'the step would never match',
          });
        });
      }
    });
    config.watch.forEach((event, index) => {
      if (!observed.events.has(event)) unseenEvent(flow, ['watch', index], 'value', event);
    });
    for (const event of Object.keys(config.events)) {
      if (!observed.events.has(event)) unseenEvent(flow, ['events', event], 'key', event);
    }
    const segments = config.checks.segments as { enabled: boolean; max_values: number } | undefined;
    if (segments?.enabled) {
      for (const [dimension, count] of [...observed.dimensionValues].sort(([a], [b]) => a.localeCompare(b))) {
        if (count <= segments.max_values) continue;
        warn(flow, ['checks', 'segments', 'max_values'], 'value', {
          expected: `at most ${segments.max_values} values of a dimension for the segments check to watch them all`,
          found: `${count} values of ${dimension} (${window})`,
          hint: `only its ${segments.max_values} largest values are watched; raise max_values or drop the dimension`,
        });
      }
    }
  }
  return problems;
}

/** Events the flows name, to limit the parameter query to them. */
export function namedEvents(flows: readonly Checked<FlowConfig>[]): string[] {
  return [...new Set(flows.flatMap(({ config }) => flowEvents(config)))];
}

function listed(items: string[]): string {
  const sorted = [...items].sort();
  return sorted.length > 8 ? `${sorted.slice(0, 8).join(', ')}, ...` : sorted.join(', ');
}
