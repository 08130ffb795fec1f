// The change feed: a generation number that moves after every committed change to the
// tables answers are built from (plans, sites, gateways, nodes, kit, terrain, calibration,
// teams, users). Triggers of migration 20261204030000_change_feed NOTIFY "earshot_change" at
// COMMIT; this process LISTENs (PGlite: on its own instance; PostgreSQL: on one dedicated
// connection) and bumps the generation, so in-memory read memos keyed by it (the plan row of
// a request, a node-links fingerprint) are dropped by writes from any process, the CLI and
// workers included. While the PostgreSQL listener is down the feed is not `live` and callers
// must not memoise (they read the database as before); a reconnect bumps the generation
// because notifications sent meanwhile are lost.
import type { PGlite } from '@electric-sql/pglite';
import type pg from 'pg';

export const changeChannel = 'earshot_change';

export interface ChangeFeed {
  /** The current generation, or null while a change could go unnoticed (do not memoise then). */
  stamp(): number | null;
  /** This process wrote and is about to answer: memos taken before must not serve the next read. */
  bump(): void;
  close(): Promise<void>;
}

function counter() {
  let generation = 0;
  return {
    get: () => generation,
    bump: () => {
      generation++;
    },
  };
}

/** PGlite delivers a notification right after the query that committed, in this process. */
export async function pgliteChangeFeed(client: PGlite): Promise<ChangeFeed> {
  const gen = counter();
  const unlisten = await client.listen(changeChannel, () => gen.bump());
  return {
    stamp: gen.get,
    bump: gen.bump,
    async close() {
      await unlisten().catch(() => undefined);
    },
  };
}

/** One LISTEN connection to PostgreSQL, reconnected after a loss (1 s, then up to 10 s apart). */
export function postgresChangeFeed(url: string): ChangeFeed {
  const gen = counter();
  let live = false;
  let closed = false;
  let client: pg.Client | null = null;
  let retryMs = 1000;
  let timer: NodeJS.Timeout | null = null;
  const lost = () => {
    live = false;
    gen.bump();
    const old = client;
    client = null;
    if (old) void old.end().catch(() => undefined);
    if (closed || timer) return;
    timer = setTimeout(() => {
      timer = null;
      void connect();
    }, retryMs);
    timer.unref();
    retryMs = Math.min(10_000, retryMs * 2);
  };
  const connect = async () => {
    if (closed) return;
    const { default: pgModule } = await import('pg'); // loaded by PostgreSQL processes only
    if (closed) return;
    const next = new pgModule.Client({ connectionString: url, connectionTimeoutMillis: 5000 });
    next.on('error', () => {
      if (client === next) lost();
    });
    next.on('end', () => {
      if (client === next) lost();
    });
    next.on('notification', () => gen.bump());
    client = next;
    try {
      await next.connect();
      await next.query(`LISTEN ${changeChannel}`);
      if (closed || client !== next) {
        await next.end().catch(() => undefined);
        return;
      }
      // Anything committed while no one listened is unknown: memos of before must go.
      gen.bump();
      live = true;
      retryMs = 1000;
    } catch {
      if (client === next) lost();
    }
  };
  void connect();
  return {
    stamp: () => (live ? gen.get() : null),
    bump: gen.bump,
    async close() {
      closed = true;
      live = false;
      if (timer) clearTimeout(timer);
      const old = client;
      client = null;
      await old?.end().catch(() => undefined);
    },
  };
}

/** A feed that is never live: every read goes to the database (a Database made by hand, a transaction). */
export const noChangeFeed: ChangeFeed = {
  stamp: () => null,
  bump: () => undefined,
  close: async () => undefined,
};

/** The generation of a database's feed, or null when its reads must not be memoised. */
export function changeStamp(db: { changes?: ChangeFeed }): number | null {
  return db.changes ? db.changes.stamp() : null;
}

/**
 * A small memo of reads valid for one generation of the feed: an entry answers only while
 * the stamp is the one it was stored with. Store with the stamp read BEFORE the database
 * was, so a change committed during the read leaves the entry stale.
 */
export class GenerationMemo<T> {
  private readonly entries = new Map<string, { stamp: number; value: T }>();
  constructor(private readonly maxEntries = 5000) {}

  get(key: string, stamp: number | null): T | undefined {
    if (stamp === null) return undefined;
    const entry = this.entries.get(key);
    return entry && entry.stamp === stamp ? entry.value : undefined;
  }

  set(key: string, stamp: number | null, value: T): void {
    if (stamp === null) return;
    this.entries.delete(key);
    this.entries.set(key, { stamp, value });
    if (this.entries.size > this.maxEntries) this.entries.delete(this.entries.keys().next().value as string);
  }
}
