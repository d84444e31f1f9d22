/**
 * redis-server processes a test starts for itself (a restart, a failover, a cluster), on ports of
 * the test's choosing, with data in a temp folder. Never the shared Redis: tests that kill or
 * restart a server use only their own.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { Redis } from 'ioredis';

/** A redis-server started by a test: its port and process. */
export interface OwnRedis {
  port: number;
  child: ChildProcess;
  /** Resolves when the process has exited. */
  exited: Promise<void>;
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** Starts `redis-server` with the arguments (plus bind and port) and waits until it answers PING. */
export async function startOwnRedis(port: number, args: string[], cwd?: string): Promise<OwnRedis> {
  const child = spawn('redis-server', ['--bind', '127.0.0.1', '--port', String(port), ...args], {
    stdio: 'ignore',
    cwd,
  });
  const exited = new Promise<void>((resolve) => child.once('exit', () => resolve()));
  await waitPing(port);
  return { port, child, exited };
}

/** Waits until a Redis on the port answers PING (a fresh client per try: a refused one keeps reconnecting). */
export async function waitPing(port: number, timeoutMs = 10_000): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const probe = new Redis({
      port,
      host: '127.0.0.1',
      lazyConnect: true,
      maxRetriesPerRequest: 0,
      retryStrategy: () => null,
    });
    probe.on('error', () => {});
    try {
      await probe.connect();
      await probe.ping();
      probe.disconnect();
      return;
    } catch (e) {
      probe.disconnect();
      if (Date.now() > deadline)
        throw new Error(`redis-server on port ${port} did not answer PING`, { cause: e });
      await sleep(100);
    }
  }
}

/** SIGKILL (no shutdown, no final fsync) and wait for the process to be gone. */
export async function killOwnRedis(server: OwnRedis): Promise<void> {
  if (server.child.exitCode === null && server.child.signalCode === null) server.child.kill('SIGKILL');
  await server.exited;
}
