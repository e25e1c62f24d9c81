/**
 * A strict reader of the Prometheus text exposition format, version 0.0.4
 * (Prometheus documentation, "Exposition formats", section "Text-based
 * format"): `# HELP` and `# TYPE` lines, then samples
 * `name{label="value",...} value [timestamp]`. It throws on anything
 * malformed, so a test that parses /metrics fails on a bad line.
 */

export interface Sample {
  name: string;
  labels: Record<string, string>;
  value: number;
}

export interface Family {
  name: string;
  type: 'counter' | 'gauge' | 'histogram' | 'summary' | 'untyped';
  help: string;
  samples: Sample[];
}

const NAME = /^[a-zA-Z_:][a-zA-Z0-9_:]*$/;
const LABEL_NAME = /^[a-zA-Z_][a-zA-Z0-9_]*$/;
const SUFFIXES: Record<Family['type'], string[]> = {
  counter: [''],
  gauge: [''],
  untyped: [''],
  histogram: ['_bucket', '_sum', '_count'],
  summary: ['', '_sum', '_count'],
};

export function parsePrometheusText(text: string): Map<string, Family> {
  const families = new Map<string, Family>();
  const help = new Map<string, string>();
  text.split('\n').forEach((line, index) => {
    const where = `line ${index + 1}: ${line}`;
    if (line.trim() === '') return;
    if (line.startsWith('#')) {
      const match = /^# (HELP|TYPE) (\S+) ?(.*)$/.exec(line);
      if (!match) return; // a plain comment
      const [, keyword, name, rest] = match as unknown as [string, string, string, string];
      if (!NAME.test(name)) throw new Error(`bad metric name, ${where}`);
      if (keyword === 'HELP') {
        help.set(name, rest);
        const family = families.get(name);
        if (family) family.help = rest;
        return;
      }
      if (!['counter', 'gauge', 'histogram', 'summary', 'untyped'].includes(rest)) throw new Error(`bad type, ${where}`);
      if (families.has(name)) throw new Error(`second TYPE for ${name}, ${where}`);
      families.set(name, { name, type: rest as Family['type'], help: help.get(name) ?? '', samples: [] });
      return;
    }
    const sample = parseSample(line, where);
    const family = [...families.values()].find((f) => SUFFIXES[f.type].some((suffix) => f.name + suffix === sample.name));
    if (!family) throw new Error(`sample without a TYPE line, ${where}`);
    family.samples.push(sample);
  });
  for (const family of families.values()) if (family.type === 'histogram') checkHistogram(family);
  return families;
}

function parseSample(line: string, where: string): Sample {
  const match = /^([a-zA-Z_:][a-zA-Z0-9_:]*)(\{(.*)\})? (\S+)( -?\d+)?$/.exec(line);
  if (!match) throw new Error(`bad sample, ${where}`);
  const labels: Record<string, string> = {};
  let rest = match[3] ?? '';
  while (rest.length > 0) {
    const label = /^([^=]+)="((?:[^"\\]|\\[\\"n])*)"(,|$)/.exec(rest);
    if (!label || !LABEL_NAME.test(label[1]!)) throw new Error(`bad label, ${where}`);
    if (label[1]! in labels) throw new Error(`repeated label ${label[1]}, ${where}`);
    labels[label[1]!] = label[2]!.replace(/\\(.)/g, (_, c: string) => (c === 'n' ? '\n' : c));
    rest = rest.slice(label[0].length);
  }
  const raw = match[4]!;
  const value = raw === '+Inf' ? Infinity : raw === '-Inf' ? -Infinity : raw === 'NaN' ? NaN : Number(raw);
  if (Number.isNaN(value) && raw !== 'NaN') throw new Error(`bad value, ${where}`);
  return { name: match[1]!, labels, value };
}

/** Buckets are cumulative, end at +Inf, and +Inf equals _count, per series. */
function checkHistogram(family: Family): void {
  const series = new Map<string, Sample[]>();
  for (const sample of family.samples) {
    const { le, ...rest } = sample.labels;
    const key = JSON.stringify(Object.entries(rest).sort());
    if (!series.has(key)) series.set(key, []);
    if (sample.name.endsWith('_bucket') && le === undefined) throw new Error(`${family.name}: bucket without le`);
    series.get(key)!.push(sample);
  }
  for (const [key, samples] of series) {
    const buckets = samples.filter((s) => s.name.endsWith('_bucket'));
    for (let i = 1; i < buckets.length; i++) {
      if (buckets[i]!.value < buckets[i - 1]!.value) throw new Error(`${family.name} ${key}: buckets decrease`);
    }
    const inf = buckets.find((b) => b.labels.le === '+Inf');
    const count = samples.find((s) => s.name.endsWith('_count'));
    if (!inf || !count || inf.value !== count.value) throw new Error(`${family.name} ${key}: +Inf bucket and _count disagree`);
  }
}
