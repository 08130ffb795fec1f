// Failed authentication is throttled per client address: a client may present at most
// `maxFailures` tokens that turn out wrong within `windowMs`; after that every request that
// carries a token answers 429 (with Retry-After) without any database or scrypt work, until
// the window ends. Attempts are counted when they start (and given back on success), so a
// burst of concurrent wrong tokens cannot all slip through before the first is counted.
// With REDIS_URL the counts live in Redis (INCR with a window-long expiry), so several API
// processes agree; without it, in memory. Requests without any token are not counted (they
// cost no verification and answer 401 at once).
import { Redis } from 'ioredis';

export interface AuthThrottle {
  /** Reserves one attempt; false when the address is over its limit (answer 429). */
  begin(address: string): Promise<{ allowed: boolean; retryAfterS: number }>;
  /** The attempt succeeded: it does not count against the address. */
  succeeded(address: string): Promise<void>;
  close(): Promise<void>;
}

export interface ThrottleOptions {
  maxFailures: number;
  windowMs: number;
  /** The clock (ms since the epoch); tests pin it so a run cannot straddle a window boundary. */
  now?: () => number;
}

export const defaultThrottle: ThrottleOptions = { maxFailures: 30, windowMs: 60_000 };

/** Fixed windows (common practice for login throttling): the count resets at each window boundary. */
function windowOf(now: number, windowMs: number): { index: number; retryAfterS: number } {
  const index = Math.floor(now / windowMs);
  return { index, retryAfterS: Math.max(1, Math.ceil(((index + 1) * windowMs - now) / 1000)) };
}

export function memoryThrottle(options: ThrottleOptions = defaultThrottle): AuthThrottle {
  const counts = new Map<string, { index: number; count: number }>();
  return {
    async begin(address) {
      const { index, retryAfterS } = windowOf((options.now ?? Date.now)(), options.windowMs);
      let entry = counts.get(address);
      if (!entry || entry.index !== index) {
        entry = { index, count: 0 };
        counts.set(address, entry);
        if (counts.size > 100_000) for (const [key, old] of counts) if (old.index !== index) counts.delete(key);
      }
      if (entry.count >= options.maxFailures) return { allowed: false, retryAfterS };
      entry.count++;
      return { allowed: true, retryAfterS };
    },
    async succeeded(address) {
      const entry = counts.get(address);
      if (entry && entry.count > 0) entry.count--;
    },
    async close() {
      counts.clear();
    },
  };
}

export function redisThrottle(url: string, prefix: string, options: ThrottleOptions = defaultThrottle): AuthThrottle {
  const redis = new Redis(url, { maxRetriesPerRequest: 1, enableOfflineQueue: true, lazyConnect: false });
  redis.on('error', () => undefined); // a Redis outage falls back to the memory counts below
  const fallback = memoryThrottle(options);
  const keyOf = (address: string, index: number) => `${prefix}authfail:${index}:${address}`;
  return {
    async begin(address) {
      const { index, retryAfterS } = windowOf((options.now ?? Date.now)(), options.windowMs);
      try {
        const key = keyOf(address, index);
        const [[, count]] = (await redis.multi().incr(key).pexpire(key, options.windowMs * 2).exec()) as [[unknown, number], unknown];
        if (count > options.maxFailures) {
          await redis.decr(key);
          return { allowed: false, retryAfterS };
        }
        return { allowed: true, retryAfterS };
      } catch {
        return fallback.begin(address);
      }
    },
    async succeeded(address) {
      const { index } = windowOf((options.now ?? Date.now)(), options.windowMs);
      try {
        await redis.decr(keyOf(address, index));
      } catch {
        await fallback.succeeded(address);
      }
    },
    async close() {
      redis.disconnect();
    },
  };
}
