/**
 * Secrets never reach the logs: a Redis user and password the server refuses and a SASL password,
 * both from the environment. A refused password cannot be fixed by waiting, so the monitor ends at
 * start with one AUTH_FAILED line and exit 2 (never a crash loop, never a stack trace), and no log
 * line carries either secret or the full URL.
 */
import { describe, expect, it } from 'vitest';
import { redisUrl } from '../../harness/services.js';
import { spawnMonitor, uniqueMonitorNames, writeTestConfig } from './helpers.js';

describe('streamfence run: secrets', () => {
  it('keeps passwords out of every log line when the password is refused', async () => {
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
      expect(await mon.exited).toBe(2);
      const all = mon.logs.join('\n');
      expect(all).toMatch(/"code":"AUTH_FAILED".*redis: authentication failed for user plant-ops/);
      expect(all).not.toContain('s3cret');
      expect(all).not.toMatch(/\n\s+at /); // no stack trace
      expect(all).toContain('"user":"plant-ops"');
      expect(all).toContain(`"redis":"${u.hostname}:${u.port}"`);
    } finally {
      if (mon.child.exitCode === null) mon.child.kill('SIGTERM');
      await mon.exited;
    }
  });
});
