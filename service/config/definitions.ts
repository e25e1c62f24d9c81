import type { CalendarDay, FlowDefinition, ParamContract } from '../../checks/types.js';
import type { WarehouseMapping } from '../warehouse/mapping.js';
import type { WarehouseSettings } from '../warehouse/open.js';
import type { CalendarEntry, FlowConfig, MainConfig } from './schema.js';

/** The flow as the checks and the rollup see it. */
export function toFlowDefinition(flow: FlowConfig): FlowDefinition {
  const contracts: Record<string, Record<string, ParamContract>> = {};
  for (const [event, declaration] of Object.entries(flow.events)) contracts[event] = declaration.params;
  const stepEvents = flow.steps.map((step) => step.event);
  return {
    id: flow.flow,
    owner: flow.owner,
    steps: flow.steps,
    conversionWindowSeconds: flow.conversion_window,
    stepTimeCapSeconds: flow.step_time_cap,
    entry: flow.entry,
    platforms: flow.platforms,
    events: [...new Set([...stepEvents, ...flow.watch, ...Object.keys(flow.events)])],
    contracts,
  };
}

export function toWarehouseSettings(main: MainConfig): WarehouseSettings {
  const { work_mem, statement_timeout, tls_ca_file, embedded_dir } = main.warehouse;
  return { workMem: work_mem, statementTimeoutSeconds: statement_timeout, embeddedDir: embedded_dir, ...(tls_ca_file ? { tlsCaFile: tls_ca_file } : {}) };
}

export function toWarehouseMapping(main: MainConfig): WarehouseMapping {
  return {
    table: main.warehouse.events_table,
    columns: main.warehouse.columns,
    dimensions: main.warehouse.dimensions,
    platforms: main.warehouse.platforms,
    limits: main.warehouse.limits,
  };
}

/** Expands calendar entries to the single days within [from, to]. */
export function expandCalendar(entries: readonly CalendarEntry[], from: string, to: string): CalendarDay[] {
  const days: CalendarDay[] = [];
  for (const day of daysBetween(from, to)) {
    const dayOfMonth = Number(day.slice(8, 10));
    for (const entry of entries) {
      const hit =
        entry.date === day ||
        (entry.from !== undefined && entry.to !== undefined && entry.from <= day && day <= entry.to) ||
        (entry.monthly?.includes(dayOfMonth) ?? false);
      if (hit) days.push({ day, note: entry.note, expect: entry.expect });
    }
  }
  return days;
}

/** Inclusive list of ISO days from `from` to `to`. */
export function daysBetween(from: string, to: string): string[] {
  const days: string[] = [];
  for (let t = Date.parse(`${from}T00:00:00Z`); t <= Date.parse(`${to}T00:00:00Z`); t += 86_400_000) {
    days.push(new Date(t).toISOString().slice(0, 10));
  }
  return days;
}

export function addDays(day: string, n: number): string {
  return new Date(Date.parse(`${day}T00:00:00Z`) + n * 86_400_000).toISOString().slice(0, 10);
}
