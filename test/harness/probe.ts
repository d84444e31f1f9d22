/** Checks that a service really answers: a Kafka metadata request, a Redis PING, a Docker /_ping. */
import net from 'node:net';
import { Kafka, logLevel } from 'kafkajs';
import { Redis } from 'ioredis';

const errorText = (err: unknown): string => (err instanceof Error ? err.message : String(err));

/** Resolves to undefined when the brokers answer a metadata request, else to the reason they do not. */
export async function kafkaProblem(brokers: string[], timeoutMs = 10_000): Promise<string | undefined> {
  const deadline = Date.now() + timeoutMs;
  let last = 'no attempt';
  // A few tries: a broker that was just started may refuse the first connection.
  while (Date.now() < deadline) {
    const admin = new Kafka({
      clientId: 'streamfence-harness-probe',
      brokers,
      logLevel: logLevel.NOTHING,
      connectionTimeout: 2_000,
      requestTimeout: 5_000,
      retry: { retries: 0 },
    }).admin();
    try {
      await admin.connect();
      const cluster = await admin.describeCluster();
      if (cluster.brokers.length === 0) throw new Error('metadata lists no brokers');
      return undefined;
    } catch (err) {
      last = errorText(err);
    } finally {
      await admin.disconnect().catch(() => undefined);
    }
    await new Promise((r) => setTimeout(r, 300));
  }
  return last;
}

/** Resolves to undefined when Redis answers PING, else to the reason it does not. */
export async function redisProblem(url: string, timeoutMs = 3_000): Promise<string | undefined> {
  const client = new Redis(url, {
    lazyConnect: true,
    connectTimeout: timeoutMs,
    maxRetriesPerRequest: 0,
    enableOfflineQueue: false,
    retryStrategy: () => null,
  });
  client.on('error', () => undefined);
  try {
    await client.connect();
    const reply = await client.ping();
    return reply === 'PONG' ? undefined : `PING answered ${reply}`;
  } catch (err) {
    return errorText(err);
  } finally {
    client.disconnect();
  }
}

/**
 * True when a Docker engine answers /_ping within timeoutMs. A docker CLI on PATH proves nothing
 * (this project's machines have the client without an engine), so ask the engine itself.
 */
export function dockerAnswers(timeoutMs = 1_000): Promise<boolean> {
  const host = process.env.DOCKER_HOST ?? 'unix:///var/run/docker.sock';
  let target: net.NetConnectOpts;
  if (host.startsWith('unix://')) target = { path: host.slice('unix://'.length) };
  else if (host.startsWith('tcp://')) {
    const url = new URL(host.replace(/^tcp:/, 'http:'));
    target = { host: url.hostname, port: Number(url.port || 2375) };
  } else return Promise.resolve(false);

  return new Promise((resolve) => {
    let reply = '';
    const socket = net.connect(target);
    const done = (ok: boolean) => {
      socket.destroy();
      resolve(ok);
    };
    socket.setTimeout(timeoutMs, () => done(false));
    socket.on('error', () => done(false));
    socket.on('connect', () => socket.write('GET /_ping HTTP/1.0\r\nHost: docker\r\n\r\n'));
    socket.on('data', (chunk) => {
      reply += chunk.toString('latin1');
      if (/^HTTP\/1\.[01] 200/.test(reply) && reply.endsWith('OK')) done(true);
    });
    socket.on('end', () => done(/^HTTP\/1\.[01] 200/.test(reply)));
  });
}
