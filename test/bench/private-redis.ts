/**
 * A memory-only redis-server of a bench's own on a free loopback port, so a bench's Redis command
 * counts and memory are its own (shared by the monitor and rebuild benches).
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { createServer } from 'node:net';
import { Redis } from 'ioredis';

const sleep = (ms: number) => new Promise((resolve) => setTimeout(resolve, ms));

/** A TCP port on 127.0.0.1 that was free a moment ago. */
export async function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const server = createServer();
    server.once('error', reject);
    server.listen(0, '127.0.0.1', () => {
      const port = (server.address() as { port: number }).port;
      server.close(() => resolve(port));
    });
  });
}

/** Start redis-server without persistence and wait (up to ~5 s) until it answers PING. */
export async function privateRedis(): Promise<{ url: string; proc: ChildProcess }> {
  const port = await freePort();
  const proc = spawn(
    'redis-server',
    ['--port', String(port), '--bind', '127.0.0.1', '--save', '', '--appendonly', 'no'],
    { stdio: 'ignore' },
  );
  const url = `redis://127.0.0.1:${port}`;
  for (let attempt = 0; ; attempt++) {
    const client = new Redis(url, { lazyConnect: true, maxRetriesPerRequest: 0, retryStrategy: () => null });
    client.on('error', () => {});
    try {
      await client.connect();
      await client.ping();
      client.disconnect();
      return { url, proc };
    } catch (e) {
      client.disconnect();
      if (attempt > 50) throw e;
      await sleep(100);
    }
  }
}
