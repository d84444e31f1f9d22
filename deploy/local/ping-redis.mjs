// Exit 0 when a Redis server at the given URL answers PING within a short time, 1 otherwise.
//   node ping-redis.mjs redis://127.0.0.1:6379 [timeoutSeconds] [caFile user passwordFile]
// (the last three for the secure stack's TLS-only, ACL-protected Redis)
/* global process, console */
import { readFileSync } from 'node:fs';
import { Redis } from 'ioredis';

const url = process.argv[2] ?? 'redis://127.0.0.1:6379';
const timeoutMs = Number(process.argv[3] ?? 2) * 1000;
// No retries and no offline queue: we want a yes/no answer now, not a client that waits for a server.
const client = new Redis(url, {
  lazyConnect: true,
  connectTimeout: timeoutMs,
  maxRetriesPerRequest: 0,
  enableOfflineQueue: false,
  retryStrategy: () => null,
  ...(process.argv[4]
    ? {
        tls: { ca: readFileSync(process.argv[4]) },
        username: process.argv[5],
        password: readFileSync(process.argv[6], 'utf8').trim(),
      }
    : {}),
});
client.on('error', () => {});
try {
  await client.connect();
  const reply = await client.ping();
  if (reply !== 'PONG') throw new Error(`unexpected reply ${reply}`);
  console.log(`ping-redis: ${url} answers PING`);
  process.exitCode = 0;
} catch (err) {
  console.error(`ping-redis: ${url} does not answer: ${err instanceof Error ? err.message : String(err)}`);
  process.exitCode = 1;
} finally {
  client.disconnect();
}
