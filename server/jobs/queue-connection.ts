// The BullMQ queue prefix and Redis connection every queue of earshot uses (a module of its own so
// the coverage runner and the link-run runner share it without importing each other).
/** Redis key prefix of the queues (EARSHOT_QUEUE_PREFIX, default "earshot"), so several installs or test runs can share one Redis. */
export function queuePrefix(env: NodeJS.ProcessEnv = process.env): string {
  return env.EARSHOT_QUEUE_PREFIX?.trim() || 'earshot';
}

/** BullMQ connection options from a redis:// URL. */
export function redisConnection(url: string): { host: string; port: number; password?: string; username?: string; db?: number; maxRetriesPerRequest: null } {
  const parsed = new URL(url);
  return {
    host: parsed.hostname || '127.0.0.1',
    port: parsed.port ? Number(parsed.port) : 6379,
    password: parsed.password ? decodeURIComponent(parsed.password) : undefined,
    username: parsed.username ? decodeURIComponent(parsed.username) : undefined,
    db: parsed.pathname && parsed.pathname.length > 1 ? Number(parsed.pathname.slice(1)) : undefined,
    maxRetriesPerRequest: null,
  };
}
