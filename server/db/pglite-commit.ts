// pglite-prisma-adapter loses an error raised at COMMIT: its transaction promise ends in a
// `.catch` whose reject is already spent, so Prisma is told a rolled-back transaction was
// stored (a deferred constraint or a deferred constraint trigger fails only at COMMIT). This
// wrapper gives the adapter a transaction whose commit() awaits PGlite's own transaction
// promise and throws what COMMIT raised (converted by the adapter's own error mapping), so
// PGlite behaves as PostgreSQL through @prisma/adapter-pg does.
import type { PGlite, Transaction as PGliteTx } from '@electric-sql/pglite';
import type { PrismaPGlite } from 'pglite-prisma-adapter';

type Factory = InstanceType<typeof PrismaPGlite>;
type Adapter = Awaited<ReturnType<Factory['connect']>>;

interface AdapterInternals {
  onError(error: unknown): never;
  startTransactionInner(conn: PGlite, options: { usePhantomQuery: boolean }): Promise<unknown>;
}

function fixTransactions(adapter: Adapter): Adapter {
  const internals = adapter as unknown as AdapterInternals;
  if (typeof internals.startTransactionInner !== 'function' || typeof internals.onError !== 'function') {
    throw new Error('pglite-prisma-adapter changed its internals; re-check server/db/pglite-commit.ts');
  }
  internals.startTransactionInner = (conn, options) =>
    new Promise((resolve, reject) => {
      let started = false;
      let finish: () => void = () => {};
      const finished = new Promise<void>((done) => (finish = done));
      const outcome = conn.transaction(async (tx: PGliteTx) => {
        // The adapter's own query methods, on the transaction's connection.
        const transaction = Object.create(adapter, { client: { value: tx } }) as Record<string, unknown>;
        transaction.options = options;
        transaction.commit = async () => {
          finish();
          try {
            await outcome;
          } catch (error) {
            internals.onError(error);
          }
        };
        transaction.rollback = async () => {
          await tx.rollback().catch(() => undefined);
          finish();
          await outcome.catch(() => undefined);
        };
        started = true;
        resolve(transaction);
        await finished;
      });
      // Before the callback ran (BEGIN failed) the caller learns it here; after, commit() does.
      outcome.catch((error: unknown) => {
        if (!started) reject(error);
      });
    });
  return adapter;
}

/** The PGlite adapter factory with COMMIT errors reported. */
export function commitCheckingPglite(factory: Factory): Factory {
  const wrapped = Object.create(factory) as Factory;
  wrapped.connect = async () => fixTransactions(await factory.connect());
  return wrapped;
}
