/**
 * What was injected into the demo data, where and when: the answer key a run of
 * plumbline over the scenario is scored against. Findings that match an entry
 * (check, platform, day range) are true; anything else on the data is noise.
 */
import { mkdir, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import {
  COLLECTOR_STOPPED_AT,
  DEMO_FROM,
  DEMO_TIMEZONE,
  DEMO_TO,
  INCIDENT_DAYS,
  PLATFORMS,
  RIDER_DROPPED_IN,
  RIDER_FIXED_IN,
  ZONE_RENAMED_IN,
  rolloutComplete,
} from './model.js';

export type CheckId = 'volume' | 'seasonal' | 'conversion' | 'schema' | 'parity' | 'freshness' | 'segments';
export type CauseLabel = 'data_delay' | 'release' | 'platform' | 'segment' | 'calendar' | 'behaviour';

export interface Incident {
  id: string;
  kind: 'tracking_dropped' | 'param_renamed' | 'event_outage' | 'duplicate_events' | 'holiday' | 'collector_delay' | 'segment_change';
  description: string;
  /** Flow whose definitions are affected, null when the whole table is. */
  flow: string | null;
  /** plumbline platform name (web, android, ios), null for all platforms. */
  platform: string | null;
  version: string | null;
  event: string | null;
  /** Step name in the flow whose reach drops, if any. */
  step: string | null;
  param: string | null;
  segment: { dimension: string; value: string } | null;
  firstDay: string;
  lastDay: string;
  /** Checks that should report it. */
  expectedChecks: CheckId[];
  /** Checks that may also report it without that being noise. */
  alsoAcceptable: CheckId[];
  expectedCause: CauseLabel;
  causeVersion?: string;
}

/** Changes in the data that are not incidents: a finding on them is a false alarm. */
export interface BenignChange {
  id: string;
  description: string;
  days: string[];
}

const androidRelease = (version: string) => PLATFORMS[1]!.releases.find((release) => release.version === version)!;
const iosRelease = (version: string) => PLATFORMS[2]!.releases.find((release) => release.version === version)!;

const ALL_INCIDENTS: readonly Incident[] = [
  {
    id: 'android_release_drops_step',
    kind: 'tracking_dropped',
    description: `Android ${RIDER_DROPPED_IN} stops sending screen_shown {view: rider_details} (step 3 of monthly_pass); ${RIDER_FIXED_IN} fixes it. Both roll out over about a week, so the loss grows, peaks and fades with adoption.`,
    flow: 'monthly_pass',
    platform: 'android',
    version: RIDER_DROPPED_IN,
    event: 'screen_shown',
    step: 'rider',
    param: null,
    segment: null,
    firstDay: androidRelease(RIDER_DROPPED_IN).firstDay,
    lastDay: rolloutComplete(androidRelease(RIDER_FIXED_IN)),
    expectedChecks: ['volume', 'conversion', 'parity'],
    alsoAcceptable: ['seasonal'],
    expectedCause: 'release',
    causeVersion: RIDER_DROPPED_IN,
  },
  {
    id: 'ios_release_renames_param',
    kind: 'param_renamed',
    description: `iOS ${ZONE_RENAMED_IN} sends zone_selected with \`zone\` instead of \`fare_zone\` (a required, declared parameter); never fixed within the demo.`,
    flow: 'monthly_pass',
    platform: 'ios',
    version: ZONE_RENAMED_IN,
    event: 'zone_selected',
    step: null,
    param: 'fare_zone',
    segment: null,
    firstDay: iosRelease(ZONE_RENAMED_IN).firstDay,
    lastDay: DEMO_TO,
    expectedChecks: ['schema'],
    alsoAcceptable: [],
    expectedCause: 'release',
    causeVersion: ZONE_RENAMED_IN,
  },
  {
    id: 'web_event_outage',
    kind: 'event_outage',
    description: 'The web tag for screen_shown {view: pay_review} (step 4 of monthly_pass) sends nothing for two days; purchases still happen.',
    flow: 'monthly_pass',
    platform: 'web',
    version: null,
    event: 'screen_shown',
    step: 'review',
    param: null,
    segment: null,
    firstDay: INCIDENT_DAYS.webPayReviewOutage.from,
    lastDay: INCIDENT_DAYS.webPayReviewOutage.to,
    expectedChecks: ['volume', 'conversion'],
    alsoAcceptable: ['parity', 'seasonal'],
    expectedCause: 'platform',
  },
  {
    id: 'android_duplicate_firing',
    kind: 'duplicate_events',
    description: 'Android sends every pass_purchase_result twice, a few milliseconds apart, on all app versions for a week: events per person double, people do not.',
    flow: 'monthly_pass',
    platform: 'android',
    version: null,
    event: 'pass_purchase_result',
    step: null,
    param: null,
    segment: null,
    firstDay: INCIDENT_DAYS.androidDuplicates.from,
    lastDay: INCIDENT_DAYS.androidDuplicates.to,
    expectedChecks: ['volume'],
    alsoAcceptable: ['freshness', 'seasonal', 'parity'],
    expectedCause: 'platform',
  },
  {
    id: 'public_holiday',
    kind: 'holiday',
    description: 'Labor Day: every platform about 45% lower, conversion unchanged. Declared in the calendar as a low day.',
    flow: null,
    platform: null,
    version: null,
    event: null,
    step: null,
    param: null,
    segment: null,
    firstDay: INCIDENT_DAYS.laborDay,
    lastDay: INCIDENT_DAYS.laborDay,
    expectedChecks: ['volume'],
    alsoAcceptable: ['seasonal'],
    expectedCause: 'calendar',
  },
  {
    id: 'public_holiday_thanksgiving',
    kind: 'holiday',
    description: 'Thanksgiving: every platform about 50% lower, conversion unchanged. Declared in the calendar as a low day.',
    flow: null,
    platform: null,
    version: null,
    event: null,
    step: null,
    param: null,
    segment: null,
    firstDay: INCIDENT_DAYS.thanksgiving,
    lastDay: INCIDENT_DAYS.thanksgiving,
    expectedChecks: ['volume'],
    alsoAcceptable: ['seasonal'],
    expectedCause: 'calendar',
  },
  {
    id: 'collector_delay',
    kind: 'collector_delay',
    description: `The newest day has events only until ${COLLECTOR_STOPPED_AT} local time on every platform: the collector is behind. The day must not be judged yet.`,
    flow: null,
    platform: null,
    version: null,
    event: null,
    step: null,
    param: null,
    segment: null,
    firstDay: INCIDENT_DAYS.collectorDelay,
    lastDay: INCIDENT_DAYS.collectorDelay,
    expectedChecks: ['freshness'],
    alsoAcceptable: [],
    expectedCause: 'data_delay',
  },
  {
    id: 'segment_payment_declines',
    kind: 'segment_change',
    description: 'Payments from Canada (country = CA) are declined for about 80% of attempts on every platform: pass_purchase_result outcome declined instead of approved.',
    flow: 'monthly_pass',
    platform: null,
    version: null,
    event: 'pass_purchase_result',
    step: 'done',
    param: 'outcome',
    segment: { dimension: 'country', value: 'CA' },
    firstDay: INCIDENT_DAYS.canadaDeclines.from,
    lastDay: INCIDENT_DAYS.canadaDeclines.to,
    expectedChecks: ['conversion', 'segments'],
    alsoAcceptable: ['seasonal'],
    expectedCause: 'segment',
  },
];

const BENIGN: readonly BenignChange[] = [
  ...PLATFORMS.flatMap((platform) =>
    platform.releases
      .filter((release) => ![RIDER_DROPPED_IN, RIDER_FIXED_IN, ZONE_RENAMED_IN].includes(release.version))
      .map((release) => ({
        id: `${platform.id}_release_${release.version}`,
        description: `${platform.id} ${release.version} rolls out with no tracking change.`,
        days: [release.firstDay, rolloutComplete(release)],
      })),
  ),
  { id: 'dst_end', description: 'Clocks go back: a 25-hour day with an ordinary event count.', days: ['2026-11-01'] },
  { id: 'month_start', description: 'Days 1-2 of every month: pass renewals, about 1.8 times the pass journeys (declared in the calendar).', days: [] },
];

export interface GroundTruthRange {
  from: string;
  to: string;
  incidents: boolean;
}

/** The incidents visible in a generated range: those overlapping it, holidays always, the collector delay only on the newest day. */
export function groundTruthFor(range: GroundTruthRange): Incident[] {
  return ALL_INCIDENTS.filter((incident) => {
    if (incident.firstDay > range.to || incident.lastDay < range.from) return false;
    if (incident.kind === 'holiday') return true;
    if (!range.incidents) return false;
    return incident.kind !== 'collector_delay' || incident.firstDay === range.to;
  }).map((incident) => ({ ...incident, lastDay: incident.lastDay > range.to ? range.to : incident.lastDay }));
}

/** Ground truth of the full demo range with incidents. */
export const groundTruth: readonly Incident[] = groundTruthFor({ from: DEMO_FROM, to: DEMO_TO, incidents: true });

export const GROUND_TRUTH_FILE = 'ground-truth.json';

/** Writes the ground truth of a generated range as JSON into `dir`; returns the file's path. */
export async function writeGroundTruth(dir: string, range: GroundTruthRange = { from: DEMO_FROM, to: DEMO_TO, incidents: true }): Promise<string> {
  await mkdir(dir, { recursive: true });
  const file = join(dir, GROUND_TRUTH_FILE);
  const document = {
    scenario: 'Metro Pass',
    timezone: DEMO_TIMEZONE,
    from: range.from,
    to: range.to,
    injected: range.incidents,
    incidents: groundTruthFor(range),
    benign: BENIGN.filter((change) => change.days.length === 0 || change.days.some((day) => range.from <= day && day <= range.to)),
  };
  await writeFile(file, `${JSON.stringify(document, null, 2)}\n`);
  return file;
}
