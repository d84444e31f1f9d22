/**
 * redis-server processes a test starts for itself (a restart, a failover, a cluster), on ports of
 * the test's choosing, with data in a temp folder. Never the shared Redis: tests that kill or
 * restart a server use only their own.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { Redis } from 'ioredis';
import { afterAll } from 'vitest';

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

/** How deploy/local and docker-compose run Redis: the append-only file, fsync once a second. */
export const APPEND_ONLY_ARGS = ['--save', '', '--appendonly', 'yes', '--appendfsync', 'everysec'];
/** No persistence: a restart comes back empty. */
export const NO_PERSISTENCE_ARGS = ['--save', '', '--appendonly', 'no'];

/** A test's own redis-server that it may kill and start again, and a client of it. */
export interface OwnRedisBed {
  port: number;
  /** `redis://127.0.0.1:<port>` */
  url: string;
  /** A client of the server (connected by the first start; reconnects after a restart). */
  client: Redis;
  /** Starts the server (again: same port and data folder, so the append-only file brings its data back). */
  start(): Promise<void>;
  /** SIGKILL (a crash: no shutdown, no final fsync) and wait until it is gone. */
  kill(): Promise<void>;
}

/**
 * Call in a describe block: a redis-server of the test's own on `port` (one the test owns, see
 * DEVELOPERS.md), its data in a temp folder, with `persistence` (APPEND_ONLY_ARGS by default).
 * Registers an afterAll that disconnects the client, kills the server and removes the folder.
 */
export function useOwnRedis(port: number, persistence: string[] = APPEND_ONLY_ARGS): OwnRedisBed {
  const dir = mkdtempSync(path.join(tmpdir(), `sf-own-redis-${port}-`));
  const url = `redis://127.0.0.1:${port}`;
  const client = new Redis(url, { maxRetriesPerRequest: 2, lazyConnect: true });
  client.on('error', () => {});
  let server: OwnRedis | null = null;

  afterAll(async () => {
    client.disconnect();
    if (server) await killOwnRedis(server);
    rmSync(dir, { recursive: true, force: true });
  });

  return {
    port,
    url,
    client,
    async start() {
      server = await startOwnRedis(port, [...persistence, '--dir', dir]);
      if (client.status === 'wait') await client.connect();
    },
    async kill() {
      if (server) await killOwnRedis(server);
      server = null;
    },
  };
}
