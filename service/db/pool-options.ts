import type pg from 'pg';

/**
 * Session limits for every PostgreSQL pool (state and warehouse): a hung
 * server, a lock nobody releases or a transaction left open fails the
 * statement, so the pass fails, releases its claim and is tried again at the
 * next tick, instead of waiting forever. The server applies the three
 * timeouts per session (sent as startup parameters); node-postgres applies the
 * connection timeout and the socket's TCP keepalive.
 */
/** `connections` of plumbline.yaml, in seconds. */
export interface ConnectionLimits {
  connect_timeout: number;
  lock_timeout: number;
  idle_in_transaction_timeout: number;
  state_statement_timeout: number;
  keepalive_idle: number;
}

export function poolOptions(connections: ConnectionLimits): Pick<
  pg.PoolConfig,
  'connectionTimeoutMillis' | 'keepAlive' | 'keepAliveInitialDelayMillis' | 'statement_timeout' | 'lock_timeout' | 'idle_in_transaction_session_timeout'
> {
  return {
    connectionTimeoutMillis: connections.connect_timeout * 1000,
    keepAlive: true,
    keepAliveInitialDelayMillis: connections.keepalive_idle * 1000,
    statement_timeout: connections.state_statement_timeout * 1000,
    lock_timeout: connections.lock_timeout * 1000,
    idle_in_transaction_session_timeout: connections.idle_in_transaction_timeout * 1000,
  };
}
