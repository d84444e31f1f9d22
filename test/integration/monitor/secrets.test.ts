/**
 * Secrets never reach the logs: a Redis user and password the server refuses and a SASL password,
 * both from the environment; the monitor backs off (it never crashes on a refused dependency) and no log
 * line carries either secret or the full URL.
 */
import { describe, expect, it } from 'vitest';
import { redisUrl } from '../../harness/services.js';
import { spawnMonitor, uniqueMonitorNames, writeTestConfig } from './helpers.js';

describe('streamfence run: secrets', () => {
  it('keeps passwords out of every log line while retrying', async () => {
    const u = new URL(redisUrl());
    const mon = spawnMonitor({
      // Nothing is created for these names: the monitor never gets past the refused Redis.
      ...uniqueMonitorNames(),
      configFile: writeTestConfig(),
      extra: [
        '--redis-username',
        'plant-ops',
        '--kafka-sasl-mechanism',
        'scram-sha-256',
        '--kafka-sasl-username',
        'ops',
      ],
      env: {
        STREAMFENCE_KAFKA_SASL_PASSWORD: 'sasl-s3cret-pw',
        STREAMFENCE_REDIS_PASSWORD: 'redis-s3cret-pw',
      },
    });
    try {
      await mon.waitForLog(/"dependency":"redis".*retrying/, 30_000);
      await mon.waitForLog(/"attempt":2/, 30_000);
      const port = await mon.metricsPort();
      expect((await fetch(`http://127.0.0.1:${port}/readyz`)).status).toBe(503);
      expect(mon.child.exitCode).toBeNull(); // still alive, waiting
      const all = mon.logs.join('\n');
      expect(all).not.toContain('s3cret');
      expect(all).toContain('"user":"plant-ops"');
      expect(all).toContain(`"redis":"${u.hostname}:${u.port}"`);
    } finally {
      mon.child.kill('SIGTERM');
      await mon.exited;
    }
  });
});
