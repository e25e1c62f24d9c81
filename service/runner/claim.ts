import { setTimeout as sleep } from 'node:timers/promises';
import type pg from 'pg';
import { tryLockQuery, unlockQuery } from './queries.js';

/**
 * A PostgreSQL session advisory lock held on one dedicated connection for the
 * length of a pass. It lives exactly as long as the session: a runner that is
 * killed, or whose connection drops, lets go of it at once, so another replica
 * can take over and rerun what was left, with no lease to expire and no clock
 * to trust.
 */
export class Claim {
  private lostWith: Error | undefined;
  private readonly onError = (error: Error) => {
    this.lostWith = error;
  };

  private constructor(
    private readonly client: pg.PoolClient,
    readonly name: string,
  ) {
    client.on('error', this.onError);
  }

  /**
   * Takes the lock, polling while another session holds it. Resolves to
   * undefined when `signal` aborts first (shutdown): nothing was claimed.
   */
  static async acquire(pool: pg.Pool, name: string, options: { pollMs: number; signal: AbortSignal; onWait: () => void }): Promise<Claim | undefined> {
    const claim = new Claim(await pool.connect(), name);
    try {
      let waiting = false;
      while (!options.signal.aborted) {
        const { rows } = await claim.client.query<{ ok: boolean }>(tryLockQuery(name));
        if (rows[0]!.ok) return claim;
        if (!waiting) options.onWait();
        waiting = true;
        await sleep(options.pollMs, undefined, { signal: options.signal }).catch(() => undefined);
      }
    } catch (error) {
      claim.detach(true);
      throw error;
    }
    claim.detach(false);
    return undefined;
  }

  /** Set when the connection holding the lock failed: the lock is gone, another replica may have it. */
  get lost(): Error | undefined {
    return this.lostWith;
  }

  async release(): Promise<void> {
    let broken = this.lostWith !== undefined;
    if (!broken) {
      try {
        await this.client.query(unlockQuery(this.name));
      } catch {
        broken = true;
      }
    }
    // A connection that may still hold the lock must never go back to the pool.
    this.detach(broken);
  }

  private detach(destroy: boolean): void {
    this.client.off('error', this.onError);
    this.client.release(destroy);
  }
}
