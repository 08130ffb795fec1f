// The Database handle every repository takes (made by openDatabase in client.ts). Its own
// module, so repositories that client.ts itself calls (the kit sync) name the type without
// importing client.ts back.
import type { PrismaClient } from './generated/client.ts';
import type { RawSql } from './migrate.ts';
import type { ChangeFeed } from './change-feed.ts';

export interface Database {
  prisma: PrismaClient;
  engine: 'pglite' | 'postgres';
  /** Raw SQL on the same database (migrations, test resets, advisory locks). */
  raw: RawSql;
  /**
   * Committed changes to the tables answers are built from (server/db/change-feed.ts); absent
   * on a Database bound to a transaction (its reads must never be memoised).
   */
  changes?: ChangeFeed;
  close(): Promise<void>;
}
