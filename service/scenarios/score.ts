/**
 * The scorer: matches the incidents plumbline raised on generated scenarios
 * to their ground truth and computes the evaluation's figures. Pure. The
 * rules and each figure are defined in README.md ("Scoring"); in short:
 *
 * - an incident is compatible with a truth when it is of the same flow,
 *   opened within one day of the truth's days, on its platform (or on all
 *   platforms), and names the truth's version (or a later one that keeps a
 *   deliberate change) or none;
 * - each incident goes to one truth: the compatible one it describes best
 *   (right label first, then exact platform, exact version, nearest start);
 *   an incident compatible with none is false;
 * - a truth is found when at least one incident went to it;
 * - an incident that holds back several flows (a data delay) is read once
 *   for each of them, as each flow's owner reads it.
 */
import { SEVERITY_RANK } from '../../checks/severity.js';
import { addDays } from '../../checks/time.js';
import { INCIDENT_TYPES, type IncidentType, type Truth } from './catalogue.js';
import type { ObservedIncident, ScenarioRun } from './replay.js';

export interface TruthResult {
  truth: Truth;
  incidents: ObservedIncident[];
  found: boolean;
  /** The first incident (earliest opened) carries the expected label (and version, platform or segment value). */
  labelRight: boolean;
  /** Every incident that went to the truth carries it. */
  allLabelsRight: boolean;
}

export interface SeedResult {
  seed: number;
  truths: TruthResult[];
  falseIncidents: ObservedIncident[];
  cleanFlowDays: number;
  coldStart: number;
}

export interface Figures {
  /** Found truths / truths (minor truths left out). */
  recall: number;
  /** Found truths whose first incident has the right label / found truths. */
  labelAccuracy: number;
  /** Found truths all of whose incidents have the right label / found truths. */
  labelAccuracyAll: number;
  /** Incidents that went to found truths / found truths. */
  incidentsPerTruth: number;
  /** The same, counting only incidents announced in chat as warn or page. */
  alertsPerTruth: number;
  /** False incidents per flow per 30 clean judged days. */
  falsePerFlow30d: number;
  /** The same, counting only false incidents announced in chat as warn or page. */
  falseAlertsPerFlow30d: number;
  /** Findings of every check but freshness on the first 28 days, summed over seeds. */
  coldStartFindings: number;
  truths: number;
  found: number;
  falseIncidents: number;
  cleanFlowDays: number;
}

export interface TypeRow {
  type: IncidentType;
  truths: number;
  minor: number;
  found: number;
  recall: number;
  labelAccuracy: number;
  incidentsPerTruth: number;
  alertsPerTruth: number;
  /** Labels of the first incidents of found truths, most common first ("release 3, behaviour 1"). */
  labels: string;
}

export interface Score {
  overall: Figures;
  types: TypeRow[];
  seeds: SeedResult[];
}

/** Announced in chat as warn or page: what interrupts the on-call analyst. */
export function isAlert(incident: ObservedIncident): boolean {
  return incident.chat && incident.severity !== 'note';
}

export function compatible(incident: ObservedIncident, truth: Truth): boolean {
  return (
    incident.flow === truth.flow &&
    incident.openedDay >= addDays(truth.firstDay, -1) &&
    incident.openedDay <= addDays(truth.lastDay, 1) &&
    (truth.platform === null || incident.platform === null || incident.platform === truth.platform) &&
    (truth.version === null || incident.version === null || incident.version === truth.version || truth.laterVersions.includes(incident.version))
  );
}

/** The incident's cause is the truth's: label, and where the truth has one, its platform, version or segment value. */
export function labelRight(incident: ObservedIncident, truth: Truth): boolean {
  if (incident.causeLabel !== truth.expectedLabel) return false;
  switch (truth.expectedLabel) {
    case 'release':
      return incident.version === truth.version && incident.platform === truth.platform;
    case 'platform':
      return incident.platform === truth.platform;
    case 'segment':
      return (
        truth.segment !== null &&
        incident.segment?.dimension === truth.segment.dimension &&
        incident.segment.value.split(', ').includes(truth.segment.value)
      );
    default:
      return true;
  }
}

function daysApart(a: string, b: string): number {
  return Math.abs(Date.parse(`${a}T00:00:00Z`) - Date.parse(`${b}T00:00:00Z`)) / 86_400_000;
}

/** Which compatible truth describes an incident best: lower sorts first. */
function rank(incident: ObservedIncident, truth: Truth): Array<number | string> {
  return [
    labelRight(incident, truth) ? 0 : 1,
    incident.platform === truth.platform ? 0 : 1,
    incident.version === truth.version ? 0 : 1,
    truth.minor ? 1 : 0,
    daysApart(incident.openedDay, truth.firstDay),
    truth.id,
  ];
}

function compareRanks(a: Array<number | string>, b: Array<number | string>): number {
  for (let i = 0; i < a.length; i++) {
    if (a[i] === b[i]) continue;
    return typeof a[i] === 'number' ? (a[i] as number) - (b[i] as number) : String(a[i]).localeCompare(String(b[i]));
  }
  return 0;
}

/** The incident the analyst meets first: earliest opened, then the loudest. */
function firstIncident(incidents: readonly ObservedIncident[]): ObservedIncident {
  return [...incidents].sort(
    (a, b) => a.openedDay.localeCompare(b.openedDay) || Number(isAlert(b)) - Number(isAlert(a)) || SEVERITY_RANK[b.severity] - SEVERITY_RANK[a.severity] || a.id.localeCompare(b.id),
  )[0]!;
}

/** Judged days of a flow outside every truth that touches all its platforms: days a false incident could open on. */
function cleanDays(run: ScenarioRun, flow: string): number {
  const wide = run.truths.filter((t) => t.flow === flow && t.platform === null);
  return (run.judgedDays[flow] ?? []).filter((day) => !wide.some((t) => day >= addDays(t.firstDay, -1) && day <= addDays(t.lastDay, 1))).length;
}

export function scoreRun(run: ScenarioRun): SeedResult {
  const assigned = new Map<string, ObservedIncident[]>(run.truths.map((t) => [t.id, []]));
  const falseIncidents: ObservedIncident[] = [];
  const perFlow = run.incidents.flatMap((incident) => (incident.flows.length > 0 ? incident.flows : [incident.flow]).map((flow) => ({ ...incident, flow })));
  for (const incident of perFlow) {
    const best = run.truths.filter((t) => compatible(incident, t)).sort((a, b) => compareRanks(rank(incident, a), rank(incident, b)))[0];
    if (best) assigned.get(best.id)!.push(incident);
    else falseIncidents.push(incident);
  }
  const truths = run.truths.map((truth): TruthResult => {
    const incidents = assigned.get(truth.id)!.sort((a, b) => a.openedDay.localeCompare(b.openedDay) || a.id.localeCompare(b.id));
    const found = incidents.length > 0;
    return {
      truth,
      incidents,
      found,
      labelRight: found && labelRight(firstIncident(incidents), truth),
      allLabelsRight: found && incidents.every((i) => labelRight(i, truth)),
    };
  });
  const cleanFlowDays = Object.keys(run.judgedDays).reduce((sum, flow) => sum + cleanDays(run, flow), 0);
  return { seed: run.seed, truths, falseIncidents, cleanFlowDays, coldStart: run.coldStart.length };
}

const ratio = (num: number, den: number) => (den > 0 ? num / den : Number.NaN);

/** Recall, labels and duplication over a set of truths (minor ones left out). */
function truthFigures(truths: readonly TruthResult[]) {
  const counted = truths.filter((t) => !t.truth.minor);
  const found = counted.filter((t) => t.found);
  const perFound = (count: (t: TruthResult) => number) => ratio(found.reduce((sum, t) => sum + count(t), 0), found.length);
  return {
    truths: counted.length,
    found: found.length,
    recall: ratio(found.length, counted.length),
    labelAccuracy: perFound((t) => Number(t.labelRight)),
    labelAccuracyAll: perFound((t) => Number(t.allLabelsRight)),
    incidentsPerTruth: perFound((t) => t.incidents.length),
    alertsPerTruth: perFound((t) => t.incidents.filter(isAlert).length),
  };
}

function figures(seeds: readonly SeedResult[]): Figures {
  const falseIncidents = seeds.reduce((sum, s) => sum + s.falseIncidents.length, 0);
  const falseAlerts = seeds.reduce((sum, s) => sum + s.falseIncidents.filter(isAlert).length, 0);
  const cleanFlowDays = seeds.reduce((sum, s) => sum + s.cleanFlowDays, 0);
  return {
    ...truthFigures(seeds.flatMap((s) => s.truths)),
    falsePerFlow30d: ratio(30 * falseIncidents, cleanFlowDays),
    falseAlertsPerFlow30d: ratio(30 * falseAlerts, cleanFlowDays),
    coldStartFindings: seeds.reduce((sum, s) => sum + s.coldStart, 0),
    falseIncidents,
    cleanFlowDays,
  };
}

function typeRows(seeds: readonly SeedResult[]): TypeRow[] {
  return INCIDENT_TYPES.map((type): TypeRow => {
    const all = seeds.flatMap((s) => s.truths.filter((t) => t.truth.type === type));
    const labels = new Map<string, number>();
    for (const t of all.filter((t) => t.found && !t.truth.minor)) {
      const first = firstIncident(t.incidents);
      const name = labelRight(first, t.truth) || first.causeLabel !== t.truth.expectedLabel ? first.causeLabel : `${first.causeLabel} (wrong scope)`;
      labels.set(name, (labels.get(name) ?? 0) + 1);
    }
    const { labelAccuracyAll: _all, ...figures } = truthFigures(all);
    return {
      type,
      ...figures,
      minor: all.length - figures.truths,
      labels: [...labels].sort((a, b) => b[1] - a[1] || a[0].localeCompare(b[0])).map(([label, n]) => `${label} ${n}`).join(', '),
    };
  });
}

export function score(runs: readonly ScenarioRun[]): Score {
  const seeds = runs.map(scoreRun);
  return { overall: figures(seeds), types: typeRows(seeds), seeds };
}
