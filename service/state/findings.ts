import type pg from 'pg';
import type { Finding } from '../../checks/types.js';
import { quoteIdent } from '../db/sql.js';

/** Replaces the findings and verdict of (flow, day) in the caller's transaction. */
export async function storeJudgement(
  client: pg.ClientBase,
  schema: string,
  flow: string,
  day: string,
  verdict: 'judged' | 'not_ready',
  reason: string | undefined,
  findings: Finding[],
): Promise<void> {
  const s = quoteIdent(schema);
  await client.query({ text: `delete from ${s}.findings where flow = $1 and day = $2`, values: [flow, day] });
  if (findings.length > 0) {
    await client.query({
      text: `insert into ${s}.findings (flow, day, check_id, kind, series_key, metric, platform, version, subject, severity, observed,
          expected, score, direction, since, message, excerpt, evidence, calendar, muted_reason)
        select $1, $2::date, f->>'check', f->>'kind', f->>'seriesKey', f->>'metric', f->>'platform', f->>'version', f->'subject',
          f->>'severity', (f->>'observed')::float8, f->'expected', (f->>'score')::float8, f->>'direction', (f->>'since')::date,
          f->>'message', f->'excerpt', coalesce(f->'evidence', '{}'), f->>'calendar', f->>'muted'
        from jsonb_array_elements($3::jsonb) as f`,
      values: [flow, day, JSON.stringify(findings)],
    });
  }
  await client.query({
    text: `insert into ${s}.judged_days (flow, day, verdict, reason) values ($1, $2, $3, $4)
      on conflict (flow, day) do update set verdict = excluded.verdict, reason = excluded.reason, judged_at = now()`,
    values: [flow, day, verdict, reason ?? null],
  });
}
