/**
 * `schema`: the parameters of every watched event, per platform and app
 * version, against (a) the contract declared in the flow file and (b) what the
 * same platform sent on recent days.
 *
 * (a) Contract, absolute rules (`contractDrafts` in rules.ts): required keys missing
 * (events carrying the key vs the event's events), wrong JSON type (an
 * `integer` is a number without a fraction), JSON null where not nullable,
 * values outside the enum (from the profiled values; a partial profile gives a
 * lower bound), numbers outside [min, max] (smallest and largest number), and
 * keys the contract does not declare (when it declares at least one). A rule
 * is broken when the Wilson 95% lower bound of the share of events breaking
 * it exceeds `tolerance`.
 *
 * (b) Drift against the reference (scope.ts): vanished keys (presence drop),
 * null-rate jumps, type changes, values of low-cardinality keys that stopped
 * arriving, and new keys and values: reported on the first day they pass the
 * contract share test after no day of the last `drift_days` did (a stray
 * test event does not make a key known). A rate drifts when it leaves the
 * band of its reference by at least `min_change` and a two-proportion z-test
 * says p < 0.001. The reference of a
 * version is its own last `drift_days` days; a version with fewer than seven
 * usable days (a release rolling out) is compared with the platform's other
 * versions on the same days and the judged day, so a clean rollout matches
 * them and a release that renames a key does not. Baselines leave out calendar
 * days and the days the same series was already judged anomalous, so a break
 * stays reported while it lasts. New keys and values are changes, not levels:
 * they are news on the first day and known afterwards, so their test reads
 * every recent day, flagged or not. Values of a key the platform has sent on
 * fewer than seven of the recent days (one a release just renamed or added)
 * are part of the key's arrival, not news of their own. The first sight of an
 * event on a platform is its baseline: its keys and values are not news.
 *
 * Learning: while the flow is learning (`judging.learning_days`), only the
 * declared contract is judged; drift waits for its history.
 *
 * Where (scope.ts `localise`): when some versions break a rule and the other
 * versions, pooled, are clean, each is a finding of its own (a release);
 * otherwise one finding for the platform (version null).
 *
 * Floors: a version (or pooled set) with fewer than `min_events` events that
 * day is not judged on its own; its events still count in the platform's pool.
 *
 * Calendar days: drift on a declared low day that drops (or high day that
 * rises) is kept as a note with the calendar label, like every check's moves
 * (a campaign day may bring new values); contract breaks and renames keep
 * their severity, since no calendar day announces a broken rule.
 *
 * Values of keys that define flow steps (e.g. `view` of `screen_shown`) are
 * left to the step counts by default (`step_values: off`): a screen that
 * stops arriving is a volume, conversion and parity finding of the flow that
 * uses it. Turned on (e.g. `note`), schema names the version from its first
 * day; every flow watching the event then reports it, including flows that
 * do not use that screen.
 *
 * Scores: contract shares (missing_required, wrong_type, unexpected_null,
 * outside_enum, undeclared_key) and new_key / new_value: the share of events,
 * 0 to 1. renamed: the share of events that moved from the old key to the new
 * one. out_of_range: distance beyond the bound in units of the declared range
 * (or of the bound's size when one bound is declared). vanished_key,
 * null_rate, type_shift, vanished_value: two-proportion z of the day
 * against the pooled reference (Fleiss, Levin and Paik 2003), signed.
 */
import { z } from 'zod';
import { formatCount, formatPercent, renderMessage } from '../messages.js';
import { optionsFor, percent, severity } from '../options.js';
import { excerpt } from '../series.js';
import type { CheckInput, CheckModule, Finding, Severity, WithPlatforms } from '../types.js';
import { anomalousSince, calendarSeverity } from '../findings.js';
import { buildProfiles } from './profile.js';
import { contractDrafts, driftDrafts, dropEchoes, dropYoungKeyValues, pairRenames, undeclaredDrafts, type Draft, type Kind } from './rules.js';
import { EventScope } from './scope.js';

const EXCERPT_DAYS = 28;

/** How loudly a kind of change is delivered, or `off` to leave it out. */
const loudness = (fallback: Severity | 'off') => z.enum(['page', 'warn', 'note', 'off']).default(fallback);

export const options = z.strictObject({
  severity: severity('warn').describe('Severity of contract breaks and of drift that loses data: renamed, vanished keys and values, type changes, null-rate jumps.'),
  unknown_params: loudness('note').describe('Severity of keys a contract does not declare and of new keys of events without a contract, or off.'),
  new_values: loudness('note').describe('Severity of new values of low-cardinality keys without a declared enum, or off.'),
  step_values: loudness('off').describe(
    'Severity of new and vanished values of keys that define flow steps (e.g. view), which volume, conversion and parity already watch; off by default.',
  ),
  tolerance: percent().default(0.01).describe("Share of an event's events that may break a contract rule (Wilson 95% lower bound) before it is reported."),
  min_events: z.number().int().min(1).default(30).describe('Fewest events of a version (or of pooled versions) on the day for its shares to be judged.'),
  min_change: percent().default(0.1).describe("Smallest drift of a key's presence, null or type share worth a finding, in percentage points."),
  drift_days: z.number().int().min(7).max(365).default(28).describe('Recent days a version is compared with.'),
});
type Options = z.output<typeof options>;

const messages: Record<Kind, string> = {
  missing_required: '{where}: {share} of {event} events ({count} of {total}) lack the required parameter `{param}`',
  renamed: '{where} sends `{new_key}` instead of `{param}` in {event}: `{new_key}` in {new_count} of {total} events, `{param}` in {old_count}',
  wrong_type: '{where}: {share} of {event} events ({count} of {total}) send `{param}` as {found}; the contract says {type}',
  unexpected_null: '{where}: {share} of {event} events ({count} of {total}) send `{param}` as null, which the contract does not allow',
  outside_enum: '{where}: {share} of {event} events (at least {count} of {total}) send `{param}` outside the contract ({allowed}): {values}',
  out_of_range: '{where} sends `{param}` of {event} from {min} to {max}, outside the contract range {range}',
  undeclared_key: '{where}: {share} of {event} events ({count} of {total}) carry `{param}`, which the contract does not declare',
  new_key: '{where} started sending `{param}` with {event}: {share} of {total} events',
  vanished_key: '{where} stopped sending `{param}` with {event}: in {share} of {total} events, usually {expected} ({low} to {high})',
  null_rate: '{where}: `{param}` of {event} is null in {share} of {total} events carrying it, usually {expected} ({low} to {high})',
  type_shift: '{where} sends `{param}` of {event} as another type than {usual} (mostly {found}) in {share} of {total} events, usually {expected}',
  new_value: '{where} sends new values of `{param}` with {event}: {values} in {share} of {total} events',
  vanished_value: '{where} stopped sending `{param}` = {values} with {event}: 0 of {total} events, about {expected_count} expected',
};

const METRICS: Record<Kind, string> = {
  missing_required: 'missing_share',
  renamed: 'presence',
  wrong_type: 'wrong_type_share',
  unexpected_null: 'null_share',
  outside_enum: 'outside_enum_share',
  out_of_range: 'number_range',
  undeclared_key: 'presence',
  new_key: 'presence',
  vanished_key: 'presence',
  null_rate: 'null_share',
  type_shift: 'type_share',
  new_value: 'value_share',
  vanished_value: 'value_share',
};

/** Contract breaks and renames: rules, not levels, so a declared calendar day does not soften them. */
const RULE_KINDS: ReadonlySet<Kind> = new Set(['missing_required', 'renamed', 'wrong_type', 'unexpected_null', 'outside_enum', 'out_of_range', 'undeclared_key']);

function run(input: CheckInput, all: WithPlatforms<Options>): Finding[] {
  const findings: Finding[] = [];
  // Only the days a reference or an excerpt can reach are profiled.
  const reach = Math.max(EXCERPT_DAYS, all.drift_days, ...Object.values(all.per_platform).map((o) => o.drift_days));
  const platforms = new Set(input.flow.platforms);
  for (const profile of buildProfiles(input, input.days[Math.max(0, input.days.length - 1 - reach)]!)) {
    if (!platforms.has(profile.platform)) continue; // unmapped raw platforms are the config's business
    const o = optionsFor(all, profile.platform);
    const scope = new EventScope(profile, input, o);
    if (scope.versions.length === 0) continue; // the event was not sent today: volume's business
    const contract = input.flow.contracts[profile.event];
    const declared = contract !== undefined && Object.keys(contract).length > 0;
    const stepKeys = new Set(input.flow.steps.filter((step) => step.event === profile.event).flatMap((step) => Object.keys(step.where)));
    const stepValues = o.step_values !== 'off';
    const drafts = [
      ...(declared ? contractDrafts(scope, contract) : []),
      ...(declared && o.unknown_params !== 'off' ? undeclaredDrafts(scope, contract) : []),
      // Drift compares with the past: while the flow is learning, its first days are that past.
      ...(input.learning
        ? []
        : driftDrafts(scope, { contract, stepKeys, stepValues, newKeys: !declared && o.unknown_params !== 'off', newValues: o.new_values !== 'off' })),
    ];
    for (const draft of dropYoungKeyValues(scope, dropEchoes(pairRenames(scope, drafts)))) findings.push(toFinding(scope, draft, o));
  }
  return findings;
}

function toFinding(scope: EventScope, draft: Draft, o: Options): Finding {
  const { input } = scope;
  const { verdict } = draft;
  const seriesKey = scope.seriesKey(draft.family, draft.key, draft.version);
  const configured = { break: o.severity, params: o.unknown_params, values: o.new_values, steps: o.step_values }[draft.loudness];
  // A broken rule is never announced by a calendar day: only observed drift may be (a campaign's new values).
  const announceable = !RULE_KINDS.has(draft.kind);
  // 'off' kinds are never drafted; the fallback only satisfies the type.
  const { severity: level, calendar } = calendarSeverity(input, announceable ? verdict.direction : 'none', configured === 'off' ? 'note' : configured);
  const versions = draft.version === null ? null : new Set([draft.version]);
  const include = (version: string) => versions === null || versions.has(version);
  const shown = input.days.slice(-EXCERPT_DAYS);
  const values = shown.map((day) => {
    if (draft.daily) return draft.daily(day, include);
    const cell = scope.pool(day, include, draft.measure);
    return cell.n > 0 ? cell.x / cell.n : Number.NaN;
  });
  const flagged = new Set(input.anomalous[seriesKey] ?? []);
  flagged.add(input.day);
  const band = { low: values.map(() => verdict.expected.low), high: values.map(() => verdict.expected.high) };
  const where = draft.version === null ? scope.platform : `${scope.platform} ${draft.version === '' ? '(no app version)' : draft.version}`;
  const since = anomalousSince(input, seriesKey);
  const message = renderMessage(messages[draft.kind], {
    where,
    event: scope.event,
    param: draft.key,
    share: formatPercent(verdict.observed),
    count: formatCount(verdict.cell.x),
    total: formatCount(verdict.cell.n),
    expected: formatPercent(verdict.expected.center),
    low: formatPercent(verdict.expected.low),
    high: formatPercent(verdict.expected.high),
    ...draft.details,
  });
  return {
    check: 'schema',
    kind: draft.kind,
    flow: input.flow.id,
    subject: { type: 'param', name: `${scope.event}.${draft.key}`, event: scope.event, param: draft.key },
    metric: METRICS[draft.kind],
    platform: scope.platform,
    version: draft.version,
    day: input.day,
    ...(since !== undefined ? { since } : {}),
    observed: verdict.observed,
    expected: verdict.expected,
    score: verdict.score,
    direction: verdict.direction,
    severity: level,
    message,
    seriesKey,
    excerpt: excerpt(shown, values, EXCERPT_DAYS, band, flagged),
    ...(calendar !== undefined ? { calendar } : {}),
    evidence: { ...verdict.evidence, versions: draft.versions.map((version) => version || '(none)').join(', '), ...draft.details },
  };
}

export const schemaCheck: CheckModule<typeof options> = {
  id: 'schema',
  description: 'Parameters of watched events per platform and app version against the declared contract and against recent days.',
  options,
  messages,
  run,
};
