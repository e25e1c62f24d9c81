/**
 * The demo on ClickHouse (`plumbline demo --engine clickhouse`): the scenario
 * is generated in PostgreSQL as always (its generator is set-based
 * PostgreSQL SQL), then copied into the in-process ClickHouse engine through
 * ClickHouse's own `postgresql()` table function, and the PostgreSQL copy is
 * dropped, so every rollup reads ClickHouse. The table is a MergeTree ordered
 * by time, as deploy/README.md advises for a team's events table.
 */
import { quoteIdent, quoteQualified } from '../db/sql.js';
import type { ClickHouseConnection } from '../warehouse/clickhouse/connection.js';
import { ChParams, type ChQuery } from '../warehouse/clickhouse/sql.js';

/** The demo's events table in ClickHouse: the columns of the PostgreSQL one (generate-sql.ts), parameters as JSON text. */
export function createClickHouseEventsQueries(table: string): ChQuery[] {
  const [database] = table.split('.');
  return [
    { text: `create database if not exists ${quoteIdent(database!)}`, params: {} },
    { text: `drop table if exists ${quoteQualified(table)}`, params: {} },
    {
      text: `create table ${quoteQualified(table)} (
  occurred_at DateTime64(6, 'UTC'),
  event_name LowCardinality(String),
  user_id Nullable(String),
  device_id Nullable(String),
  platform LowCardinality(Nullable(String)),
  app_version LowCardinality(Nullable(String)),
  props Nullable(String),
  country LowCardinality(Nullable(String)),
  channel LowCardinality(Nullable(String))
) engine = MergeTree
order by occurred_at`,
      params: {},
    },
  ];
}

/** Replaces `target` in ClickHouse with the rows of PostgreSQL table `source` (schema.table) reached at `url`; returns the row count. */
export async function copyEventsFromPostgres(connection: ClickHouseConnection, source: { url: string; table: string }, target: string): Promise<number> {
  for (const query of createClickHouseEventsQueries(target)) await connection.command(query);
  const url = new URL(source.url);
  const [schema, table] = source.table.split('.');
  const p = new ChParams();
  const from = `postgresql(${[
    p.add(`${url.hostname}:${url.port || '5432'}`, 'String'),
    p.add(decodeURIComponent(url.pathname.slice(1)), 'String'),
    p.add(table, 'String'),
    p.add(decodeURIComponent(url.username), 'String'),
    p.add(decodeURIComponent(url.password), 'String'),
    p.add(schema, 'String'),
  ].join(', ')})`;
  await connection.command({ text: `insert into ${quoteQualified(target)} select * from ${from}`, params: p.values });
  const [row] = await connection.query<{ n: number }>({ text: `select count() as n from ${quoteQualified(target)}`, params: {} });
  return row!.n;
}
