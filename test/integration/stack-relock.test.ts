/**
 * A second `stack:up` while the stack it started is running returns at once: no server it starts may
 * inherit the descriptor of its lock file (a redis-server that did kept the lock, and the next call
 * waited forever). Runs stack-up against a stack folder of its own: it reuses the harness's broker
 * and starts its own redis-server on a free port, which it stops again.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, readdirSync, readlinkSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { kafkaBrokers } from '../harness/services.js';
import { freePort } from './monitor/helpers.js';

describe('stack:up twice', () => {
  const stackDir = mkdtempSync(path.join(tmpdir(), 'sf-stack-'));
  let env: NodeJS.ProcessEnv = {};
  const script = (name: string, timeoutMs: number) => {
    const started = Date.now();
    const r = spawnSync('bash', [`deploy/local/${name}`], { env, encoding: 'utf8', timeout: timeoutMs });
    return { ...r, ms: Date.now() - started };
  };

  afterAll(() => {
    script('stack-down.sh', 30_000);
    rmSync(stackDir, { recursive: true, force: true });
  });

  it('returns within seconds, and no started server holds the lock', async () => {
    const [host, port] = kafkaBrokers()[0].split(':');
    expect(host).toBe('127.0.0.1'); // stack-up reuses a broker on 127.0.0.1 only
    env = {
      ...process.env,
      STREAMFENCE_STACK_DIR: stackDir,
      STREAMFENCE_KAFKA_PORT: port,
      // Nothing answers here, so stack-up starts a redis-server of its own.
      STREAMFENCE_REDIS_URL: `redis://127.0.0.1:${await freePort()}`,
      STREAMFENCE_STACK_REDIS_PORT: String(await freePort()),
    };
    const first = script('stack-up.sh', 60_000);
    expect(first.status, first.stderr).toBe(0);
    expect(first.stdout).toContain('starting redis-server');
    const second = script('stack-up.sh', 20_000);
    expect(second.error, 'the second stack-up hung').toBeUndefined();
    expect(second.status, second.stderr).toBe(0);
    expect(second.stdout).toMatch(/Redis already running/);
    expect(second.ms).toBeLessThan(5_000);

    const pid = readFileSync(path.join(stackDir, 'redis', 'redis.pid'), 'utf8').trim();
    const fds = readdirSync(`/proc/${pid}/fd`).map((fd) => {
      try {
        return readlinkSync(`/proc/${pid}/fd/${fd}`);
      } catch {
        return '';
      }
    });
    expect(fds.filter((f) => f.endsWith('.lock'))).toEqual([]);
  });
});
