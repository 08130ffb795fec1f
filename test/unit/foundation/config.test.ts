// Configuration from env vars: defaults for a no-set-up start, clear errors naming the variable.
import { availableParallelism } from 'node:os';
import { resolve } from 'node:path';
import { describe, expect, it } from 'vitest';
import { ConfigError, loadConfig } from '../../../server/config.ts';

describe('loadConfig', () => {
  it('defaults: ./data, 127.0.0.1:8080, embedded database, 512 MB uploads, one worker per core', () => {
    const config = loadConfig({});
    expect(config).toMatchObject({ port: 8080, host: '127.0.0.1', dataDir: resolve('./data'), databaseUrl: undefined, redisUrl: undefined, maxUploadBytes: 512 * 1024 * 1024, maxRasterCells: 40000 * 40000, workerCount: availableParallelism() });
    expect(config.filesDir).toBe(resolve('./data/files'));
  });

  it('reads the documented variables', () => {
    const config = loadConfig({ PORT: '9000', HOST: '0.0.0.0', EARSHOT_DATA_DIR: '/srv/earshot', DATABASE_URL: 'postgresql://u@db/x', REDIS_URL: 'redis://r:6379', EARSHOT_MAX_UPLOAD_MB: '2', EARSHOT_WORKERS: '3', EARSHOT_DEMO: 'off' });
    expect(config).toMatchObject({ port: 9000, host: '0.0.0.0', dataDir: '/srv/earshot', databaseUrl: 'postgresql://u@db/x', redisUrl: 'redis://r:6379', maxUploadBytes: 2 * 1024 * 1024, workerCount: 3, seedDemo: false });
  });

  it('names the variable and the rule on bad values', () => {
    expect(() => loadConfig({ PORT: 'eighty' })).toThrow(ConfigError);
    expect(() => loadConfig({ PORT: 'eighty' })).toThrow(/^PORT: /);
    expect(() => loadConfig({ PORT: '70000' })).toThrow(/^PORT: must be a whole number 1-65535/);
    expect(() => loadConfig({ EARSHOT_MAX_UPLOAD_MB: '-1' })).toThrow(/^EARSHOT_MAX_UPLOAD_MB: must be a positive number/);
    expect(() => loadConfig({ DATABASE_URL: 'mysql://x' })).toThrow(/^DATABASE_URL: /);
    expect(() => loadConfig({ EARSHOT_WORKERS: '1.5' })).toThrow(/^EARSHOT_WORKERS: /);
  });
});
