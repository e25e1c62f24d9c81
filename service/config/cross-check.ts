/**
 * Problems no single schema can see: a value that must agree with another
 * key, another file or the list of checks. A file with schema errors still
 * takes part with the top-level keys that are valid on their own (so every
 * problem is reported in one pass); a rule runs when the keys it needs are there.
 */
import type { CheckModule } from '../../checks/types.js';
import { addDays } from './definitions.js';
import { closest, orList, pathToKey, type ConfigProblem } from './problems.js';
import type { CalendarEntry, FlowConfig, MainConfig } from './schema.js';
import type { SourceFile } from './source.js';

export interface Checked<T> {
  source: SourceFile;
  config: T;
}

export interface CrossCheckContext {
  checks: readonly CheckModule[];
  /** Today in the business timezone (YYYY-MM-DD), for mutes that have ended. */
  today: string;
}

type Emit = (source: SourceFile, path: PropertyKey[], problem: Omit<ConfigProblem, 'file' | 'line' | 'column' | 'key'>, at?: 'key' | 'value') => void;

type Main = Checked<Partial<MainConfig>>;
type Flow = Checked<Partial<FlowConfig>>;

export function crossCheck(main: Main | undefined, flows: readonly Flow[], context: CrossCheckContext): ConfigProblem[] {
  const problems: ConfigProblem[] = [];
  const emit: Emit = (source, path, problem, at = 'value') =>
    problems.push({ file: source.name, ...source.position(path, at), key: pathToKey(path), ...problem });
  if (main) {
    checkEngine(main, emit);
    checkPlatformMapping(main, emit);
    checkCalendar(main.source, main.config.calendar ?? [], undefined, emit);
  }
  for (const flow of flows) {
    checkTiming(flow, emit);
    checkSteps(flow, emit);
    checkOverrides(flow, emit);
    checkMutes(flow, context, emit);
    checkCalendar(flow.source, flow.config.calendar ?? [], main, emit);
    if (main) checkAgainstMain(flow, main, emit);
  }
  if (main) checkDeliveryRoutes(main, flows, emit);
  return problems;
}

/** plumbline's own state lives in PostgreSQL: a ClickHouse server cannot hold it, and TLS files belong to ClickHouse URLs. */
function checkEngine({ source, config }: Main, emit: Emit): void {
  const warehouse = config.warehouse;
  if (!warehouse) return;
  if (warehouse.engine === 'clickhouse' && warehouse.url !== undefined && config.state?.url === undefined) {
    emit(source, ['warehouse', 'url'], {
      expected: 'state.url as well: the state stays in PostgreSQL when the warehouse is ClickHouse',
      found: 'no state.url',
      severity: 'error',
    });
  }
  if (warehouse.engine !== 'clickhouse' && warehouse.tls_ca_file !== undefined) {
    emit(source, ['warehouse', 'tls_ca_file'], {
      expected: 'engine: clickhouse (a PostgreSQL URL names its certificates itself, e.g. sslrootcert=)',
      found: `engine: ${warehouse.engine ?? 'postgres'}`,
      severity: 'error',
    });
  }
}

/** A raw platform value mapped to two of our platforms would count its events twice. */
function checkPlatformMapping({ source, config }: Main, emit: Emit): void {
  const owner = new Map<string, string>();
  for (const [platform, values] of Object.entries(config.warehouse?.platforms ?? {})) {
    values.forEach((value, index) => {
      const first = owner.get(value);
      if (first === undefined) owner.set(value, platform);
      else if (first !== platform) {
        emit(source, ['warehouse', 'platforms', platform, index], {
          expected: 'each raw platform value mapped to one platform',
          found: `"${value}", already mapped to ${first}`,
          severity: 'error',
        });
      }
    });
  }
}

function checkTiming({ source, config }: Flow, emit: Emit): void {
  if (config.step_time_cap === undefined || config.conversion_window === undefined) return;
  if (config.step_time_cap > config.conversion_window) {
    emit(source, ['step_time_cap'], {
      expected: `a cap no longer than conversion_window (${source.written(['conversion_window']) ?? `${config.conversion_window}s`})`,
      found: source.written(['step_time_cap']) ?? `${config.step_time_cap}s`,
      severity: 'error',
      hint: 'no step-to-step time can exceed the window, so the cap would never apply',
    });
  }
}

/** Step names must be unique, and `where` must agree with the flow's own parameter contracts. */
function checkSteps({ source, config }: Flow, emit: Emit): void {
  const names = new Map<string, number>();
  config.steps?.forEach((step, index) => {
    const first = names.get(step.name);
    if (first === undefined) names.set(step.name, index);
    else emit(source, ['steps', index, 'name'], { expected: 'a step name used once in the flow', found: `"${step.name}", already steps[${first}]`, severity: 'error' });

    const contract = config.events?.[step.event]?.params;
    if (!contract || Object.keys(contract).length === 0) return;
    for (const [key, wanted] of Object.entries(step.where)) {
      const declared = contract[key];
      if (!declared) {
        const suggestion = closest(key, Object.keys(contract));
        emit(
          source,
          ['steps', index, 'where', key],
          {
            expected: `a parameter declared under events.${step.event}.params (${Object.keys(contract).join(', ')})`,
            found: `"${key}"`,
            severity: 'warning',
            ...(suggestion ? { hint: `did you mean ${suggestion}?` } : {}),
          },
          'key',
        );
        continue;
      }
      if (!declared.enum) continue;
      const allowed = declared.enum.map(String);
      const values = Array.isArray(wanted) ? wanted : [wanted];
      values.forEach((value, valueIndex) => {
        if (allowed.includes(String(value))) return;
        const suggestion = closest(String(value), allowed);
        emit(source, ['steps', index, 'where', key, ...(Array.isArray(wanted) ? [valueIndex] : [])], {
          expected: `one of the values declared in events.${step.event}.params.${key}.enum (${allowed.join(', ')})`,
          found: JSON.stringify(value),
          severity: 'error',
          hint: suggestion ? `did you mean ${suggestion}?` : 'the step could never match',
        });
      });
    }
  });
}

function checkOverrides({ source, config }: Flow, emit: Emit): void {
  const { checks, platforms } = config;
  if (!checks || !platforms) return;
  for (const [check, options] of Object.entries(checks)) {
    const overrides = (options as { per_platform?: Record<string, unknown> }).per_platform ?? {};
    for (const platform of Object.keys(overrides)) {
      if (platforms.includes(platform)) continue;
      const suggestion = closest(platform, platforms);
      emit(
        source,
        ['checks', check, 'per_platform', platform],
        {
          expected: `a platform of this flow (${platforms.join(', ')})`,
          found: `"${platform}"`,
          severity: 'error',
          ...(suggestion ? { hint: `did you mean ${suggestion}?` } : {}),
        },
        'key',
      );
    }
  }
}

function checkMutes({ source, config }: Flow, { checks, today }: CrossCheckContext, emit: Emit): void {
  const ids = checks.map((check) => check.id);
  const { platforms } = config;
  // Subjects are judged only when every key that names one is valid: otherwise a good subject could look unknown.
  const named = config.flow !== undefined && config.steps && config.watch && config.events;
  const events = named ? flowEvents(config as FlowConfig) : [];
  const subjects = new Set(named ? [config.flow!, ...config.steps!.map((step) => step.name), ...events] : []);
  config.mutes?.forEach((mute, index) => {
    if (!ids.includes(mute.check)) {
      const suggestion = closest(mute.check, ids);
      emit(source, ['mutes', index, 'check'], {
        expected: ids.length > 0 ? `a check id (${ids.join(', ')})` : 'a check id (no checks are registered)',
        found: `"${mute.check}"`,
        severity: 'error',
        ...(suggestion ? { hint: `did you mean ${suggestion}?` } : {}),
      });
    }
    if (platforms && mute.platform !== undefined && !platforms.includes(mute.platform)) {
      const suggestion = closest(mute.platform, platforms);
      emit(source, ['mutes', index, 'platform'], {
        expected: `a platform of this flow (${platforms.join(', ')})`,
        found: `"${mute.platform}"`,
        severity: 'error',
        ...(suggestion ? { hint: `did you mean ${suggestion}?` } : {}),
      });
    }
    if (named && mute.subject !== undefined && !subjects.has(mute.subject) && !events.some((event) => mute.subject!.startsWith(`${event}.`))) {
      const suggestion = closest(mute.subject, subjects);
      emit(source, ['mutes', index, 'subject'], {
        expected: 'a step name, an event of this flow, event.param, or the flow id',
        found: `"${mute.subject}"`,
        severity: 'warning',
        hint: suggestion ? `did you mean ${suggestion}?` : 'the mute would never match a finding',
      });
    }
    if (mute.until < today) {
      emit(source, ['mutes', index, 'until'], {
        expected: `today (${today}) or a later day`,
        found: `${mute.until}, already past`,
        severity: 'warning',
        hint: 'the mute has ended: remove it, or extend it with a new reason',
      });
    }
  });
}

function checkAgainstMain({ source, config }: Flow, main: Main, emit: Emit): void {
  // A day's funnel is rolled up once, when the day is judged: journeys still inside their window then would be cut short.
  const settle = main.config.judging?.settle_time;
  if (settle !== undefined && config.conversion_window !== undefined && config.conversion_window > settle) {
    emit(source, ['conversion_window'], {
      expected: `a window no longer than judging.settle_time in ${main.source.name} (${main.source.written(['judging', 'settle_time']) ?? `${settle}s`})`,
      found: source.written(['conversion_window']) ?? `${config.conversion_window}s`,
      severity: 'error',
      hint: 'the day is rolled up after the settle time; raise settle_time or shorten the window',
    });
  }
  const mapped = main.config.warehouse?.platforms;
  const platforms = Object.keys(mapped ?? {});
  config.platforms?.forEach((platform, index) => {
    if (!mapped || platforms.includes(platform)) return;
    const suggestion = closest(platform, platforms);
    emit(source, ['platforms', index], {
      expected: `a platform mapped under warehouse.platforms in ${main.source.name} (${platforms.join(', ')})`,
      found: `"${platform}"`,
      severity: 'error',
      ...(suggestion ? { hint: `did you mean ${suggestion}?` } : {}),
    });
  });
  if (!main.config.owners || config.owner === undefined) return;
  const owners = Object.keys(main.config.owners);
  if (!owners.includes(config.owner)) {
    const suggestion = closest(config.owner, owners);
    emit(source, ['owner'], {
      expected: `an owner listed under owners in ${main.source.name}${owners.length > 0 ? ` (${owners.join(', ')})` : ''}`,
      found: `"${config.owner}"`,
      severity: 'warning',
      hint: suggestion ? `did you mean ${suggestion}?` : 'without it nobody is mentioned in chat or e-mailed the digest',
    });
  }
}

/** An owner of a flow who can be reached neither by chat mention nor by e-mail never hears of the flow's incidents. */
function checkDeliveryRoutes(main: Main, flows: readonly Flow[], emit: Emit): void {
  const { owners, delivery } = main.config;
  if (!owners || !delivery) return;
  const chat = delivery.chat.webhook_url !== undefined;
  const flowsOf = new Map<string, string[]>();
  for (const { source, config } of flows) {
    if (config.owner !== undefined) flowsOf.set(config.owner, [...(flowsOf.get(config.owner) ?? []), config.flow ?? source.name]);
  }
  for (const [owner, ownedFlows] of flowsOf) {
    const entry = owners[owner];
    if (!entry || entry.email.length > 0 || (chat && entry.chat_mention !== undefined)) continue;
    emit(
      main.source,
      ['owners', owner],
      {
        expected: chat ? 'email addresses or a chat_mention' : 'email addresses (chat_mention needs delivery.chat.webhook_url)',
        found: entry.chat_mention === undefined ? 'neither' : 'a chat_mention but no chat webhook',
        severity: 'warning',
        hint: chat
          ? `incidents of ${orList(ownedFlows)} would be posted without a mention, and nobody would get the weekly digest`
          : `nobody would hear of incidents of ${orList(ownedFlows)} or get the weekly digest`,
      },
      'key',
    );
  }
}

/**
 * Entries of one calendar list must not cover a day twice (merge them); a
 * flow's entry that repeats a global one, or expects the opposite on the same
 * day, is reported too. Overlaps of a flow campaign with a global holiday that
 * agree are fine: both notes apply.
 */
function checkCalendar(source: SourceFile, entries: readonly CalendarEntry[], main: Main | undefined, emit: Emit): void {
  entries.forEach((entry, index) => {
    for (let other = 0; other < index; other++) {
      const shared = sharedDay(entry, entries[other]!);
      if (!shared) continue;
      const hint = entry.expect === entries[other]!.expect ? 'merge the two entries' : `one expects ${entry.expect}, the other ${entries[other]!.expect}`;
      emit(source, ['calendar', index], overlap(shared, `calendar[${other}] (line ${source.position(['calendar', other]).line})`, hint));
    }
    if (!main || main.source === source) return;
    main.config.calendar?.forEach((global, globalIndex) => {
      const shared = sharedDay(entry, global);
      const duplicate = JSON.stringify(span(entry)) === JSON.stringify(span(global));
      if (!shared || (!duplicate && entry.expect === global.expect)) return;
      const hint = duplicate && entry.expect === global.expect ? `the entry in ${main.source.name} already applies to every flow` : `one expects ${entry.expect}, the other ${global.expect}`;
      emit(source, ['calendar', index], overlap(shared, `calendar[${globalIndex}] of ${main.source.name} (line ${main.source.position(['calendar', globalIndex]).line})`, hint));
    });
  });
}

function overlap(shared: string, other: string, hint: string): Omit<ConfigProblem, 'file' | 'line' | 'column' | 'key'> {
  return { expected: 'days no other calendar entry covers', found: `${shared} also covered by ${other}`, severity: 'warning', hint };
}

interface Span {
  from?: string;
  to?: string;
  monthly?: number[];
}

function span(entry: CalendarEntry): Span {
  if (entry.monthly) return { monthly: [...entry.monthly].sort((x, y) => x - y) };
  return { from: entry.date ?? entry.from!, to: entry.date ?? entry.to! };
}

/** The first day two entries both cover, in words; undefined when they share none. */
function sharedDay(a: CalendarEntry, b: CalendarEntry): string | undefined {
  const x = span(a);
  const y = span(b);
  if (x.monthly && y.monthly) {
    const day = x.monthly.find((d) => y.monthly!.includes(d));
    return day === undefined ? undefined : `day ${day} of every month`;
  }
  if (x.monthly || y.monthly) {
    const days = (x.monthly ?? y.monthly)!;
    const range = x.monthly ? y : x;
    // Two months of days meet every day of the month that exists.
    const last = range.to! < addDays(range.from!, 62) ? range.to! : addDays(range.from!, 62);
    for (let day = range.from!; day <= last; day = addDays(day, 1)) if (days.includes(Number(day.slice(8, 10)))) return day;
    return undefined;
  }
  const from = x.from! > y.from! ? x.from! : y.from!;
  const to = x.to! < y.to! ? x.to! : y.to!;
  return from <= to ? from : undefined;
}

/** Events a flow names: its steps, the watched ones and the declared ones. */
export function flowEvents(config: FlowConfig): string[] {
  return [...new Set([...config.steps.map((step) => step.event), ...config.watch, ...Object.keys(config.events)])];
}

/**
 * Flow ids must be unique across files. Read from the raw data, so a copy of a
 * flow file is caught even while it has other errors.
 */
export function checkFlowIds(files: ReadonlyArray<{ source: SourceFile; data: unknown }>): ConfigProblem[] {
  const problems: ConfigProblem[] = [];
  const first = new Map<string, SourceFile>();
  for (const { source, data } of files) {
    const id = (data as { flow?: unknown } | null)?.flow;
    if (typeof id !== 'string') continue;
    const earlier = first.get(id);
    if (!earlier) {
      first.set(id, source);
      continue;
    }
    problems.push({
      file: source.name,
      ...source.position(['flow']),
      key: 'flow',
      expected: 'a flow id used by one file only',
      found: `"${id}", already the flow of ${earlier.name}`,
      severity: 'error',
    });
  }
  return problems;
}
