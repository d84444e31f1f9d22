/**
 * The retry line of a long-running command names the address and the cause in words, never the
 * client library's text; refusals waiting cannot fix are marked final.
 */
import { describe, expect, it } from 'vitest';
import { kafkaLogError, kafkaOutage, redisOutage, retryLine } from '../../../services/connect/outage.js';
import {
  kafkaConnectionLost,
  kafkaFailure,
  kafkaRefusal,
  kafkaUnreachable,
  redisConnectionLost,
  redisRefusal,
  redisUnreachable,
} from '../../../services/connect/refusals.js';

const refused = Object.assign(new Error('connect ECONNREFUSED 127.0.0.1:6399'), { code: 'ECONNREFUSED' });

describe('outage lines', () => {
  it('words ioredis "max retries" by the socket error seen before it', () => {
    const ioredisText = new Error('Reached the max retries per request limit (which is 1).');
    const outage = redisOutage(ioredisText, { url: 'redis://127.0.0.1:6399' }, refused);
    expect(retryLine(outage, 5_000)).toBe('redis 127.0.0.1:6399: connection refused; retrying in 5 s');
    expect(outage).toMatchObject({ cause: 'connection', refusal: null });
  });

  it('a wrong Redis password is a final refusal', () => {
    const outage = redisOutage(
      new Error('x'),
      { url: 'redis://127.0.0.1:6379' },
      new Error('WRONGPASS invalid username-password pair'),
    );
    expect(outage.cause).toBe('auth');
    expect(outage.refusal?.code).toBe('AUTH_FAILED');
  });

  it('an unreachable broker, without the library class name', () => {
    const err = new Error('Connection error: connect ECONNREFUSED 127.0.0.1:9999');
    const outage = kafkaOutage(err, { brokers: ['127.0.0.1:9999'] });
    expect(retryLine(outage, 200)).toBe('kafka 127.0.0.1:9999: connection refused; retrying in 0.2 s');
    expect(retryLine(outage, null)).toBe('kafka 127.0.0.1:9999: connection refused; retrying');
  });

  // Node's text when a peer ends the connection before the handshake completes (what a plain
  // Kafka listener does with a TLS hello).
  const dropped = Object.assign(
    new Error('Client network socket disconnected before secure TLS connection was established'),
    { code: 'ECONNRESET' },
  );

  it('a TLS peer that drops the handshake is a final TLS_FAILED refusal, in words', () => {
    const kafka = kafkaOutage(new Error(`Connection error: ${dropped.message}`), {
      brokers: ['127.0.0.1:9092'],
      tls: true,
    });
    expect(kafka).toMatchObject({ dependency: 'kafka', cause: 'tls' });
    expect(kafka.refusal?.code).toBe('TLS_FAILED');
    expect(kafka.line).toBe(
      'kafka: 127.0.0.1:9092 ended the connection during the TLS handshake; check that this port is a TLS listener (a plain one does this) or leave out --kafka-tls',
    );
    const redis = redisOutage(
      new Error('Connection is closed.'),
      { url: 'rediss://127.0.0.1:6380' },
      dropped,
    );
    expect(redis.refusal?.code).toBe('TLS_FAILED');
    expect(redis.line).toMatch(/^redis: 127\.0\.0\.1:6380 ended the connection during the TLS handshake; /);
    expect(`${kafka.line} ${redis.line}`).not.toMatch(
      /socket|secure TLS connection was established|Connection is closed/,
    );
  });

  it('the same drop without TLS configured is not called a TLS failure', () => {
    const redis = redisOutage(new Error('Connection is closed.'), { url: 'redis://127.0.0.1:6380' }, dropped);
    expect(redis.refusal?.message ?? '').not.toMatch(/TLS handshake/);
  });

  it('a broker answer logged by the client ("Response …") is worded by its error, an ACL denial as one', () => {
    const s = {
      brokers: ['127.0.0.1:19092'],
      sasl: { mechanism: 'scram-sha-512' as const, username: 'monitor', password: 'x' },
    };
    // kafkajs' words for GROUP_AUTHORIZATION_FAILED (its protocol error table).
    const err = kafkaLogError({
      message: 'Response GroupCoordinator(key: 10, version: 2)',
      error: 'Not authorized to access group: Group authorization failed',
    });
    const outage = kafkaOutage(err, s, 'read topic sf-in-a in group other-a');
    expect(outage.cause).toBe('acl');
    expect(outage.line).toBe(
      'kafka: not authorised to read topic sf-in-a in group other-a (group ACL) for user monitor; grant the ACL or use another user',
    );
    expect(kafkaLogError({ message: 'Connection timeout' }).message).toBe('Connection timeout');
  });
});

describe('a broker that closes the connection: TLS hint at start-up, connection lost later', () => {
  // kafkajs' error when the peer closes a connection (KafkaJSConnectionClosedError names the broker).
  const closed = Object.assign(new Error('Closed connection'), {
    name: 'KafkaJSConnectionClosedError',
    broker: '127.0.0.1:20001',
  });
  const settings = { brokers: ['127.0.0.1:20001'] };

  it('never answered this process: the TLS/SASL hint (a refusal the caller may retry)', () => {
    const outage = kafkaOutage(closed, settings, 'connect', new Set());
    expect(outage.cause).toBe('tls');
    expect(outage.line).toBe(
      'kafka: 127.0.0.1:20001 closed the connection without answering; if its listener expects TLS or SASL, set --kafka-tls and the SASL options',
    );
    expect(kafkaConnectionLost(closed, settings, new Set())).toBeNull();
  });

  it('had answered before: "connection lost", cause disconnected, no TLS words', () => {
    const answered = new Set(['127.0.0.1:20001']);
    const outage = kafkaOutage(closed, settings, 'connect', answered);
    expect(outage).toMatchObject({ dependency: 'kafka', cause: 'disconnected', refusal: null });
    expect(retryLine(outage, 2_000)).toBe('kafka 127.0.0.1:20001: connection lost; retrying in 2 s');
    expect(kafkaRefusal(closed, settings, 'connect', answered)).toBeNull();
    expect(kafkaFailure(closed, settings).message).toMatch(/TLS or SASL/); // this process: never answered
    expect(kafkaUnreachable(closed, settings, answered)?.message).toMatch(
      /^kafka 127\.0\.0\.1:20001: connection lost; check --brokers/,
    );
  });

  it('judges by the broker the error names, else by the brokers given', () => {
    const reset = Object.assign(new Error('Connection error: read ECONNRESET'), { code: 'ECONNRESET' });
    // No broker named: any of the given brokers that answered counts.
    expect(kafkaConnectionLost(reset, { brokers: ['a:1', 'b:2'] }, new Set(['b:2']))).toBe('b:2');
    // The named broker never answered (another one did): still the start-up hint.
    const other = { ...closed, broker: 'c:3', message: 'Closed connection', name: closed.name };
    expect(kafkaConnectionLost(other, { brokers: ['b:2', 'c:3'] }, new Set(['b:2']))).toBeNull();
    // An error that is not a closed connection is not a lost one.
    const refusedNow = new Error('Connection error: connect ECONNREFUSED 127.0.0.1:20001');
    expect(kafkaConnectionLost(refusedNow, settings, new Set(['127.0.0.1:20001']))).toBeNull();
    expect(kafkaOutage(refusedNow, settings, 'connect', new Set(['127.0.0.1:20001'])).cause).toBe(
      'connection',
    );
  });

  it('a TLS handshake dropped by a broker that had answered over TLS is a connection lost too', () => {
    const droppedNow = Object.assign(
      new Error('Client network socket disconnected before secure TLS connection was established'),
      { code: 'ECONNRESET', broker: '127.0.0.1:20001' },
    );
    const outage = kafkaOutage(
      droppedNow,
      { ...settings, tls: true },
      'connect',
      new Set(['127.0.0.1:20001']),
    );
    expect(outage).toMatchObject({ cause: 'disconnected', refusal: null });
  });
});

describe('a Redis that closes the connection: TLS hint only if it never answered, connection lost later', () => {
  // What ioredis reports (its 'error' event: node's socket errors; the rejected command: its own).
  const reset = Object.assign(new Error('read ECONNRESET'), { code: 'ECONNRESET', errno: -104 });
  const pipe = Object.assign(new Error('write EPIPE'), { code: 'EPIPE' });
  const maxRetries = new Error(
    'Reached the max retries per request limit (which is 1). Refer to "maxRetriesPerRequest" option for details.',
  );
  const closed = new Error('Connection is closed.');
  const refusedHere = Object.assign(new Error('connect ECONNREFUSED 127.0.0.1:20001'), {
    code: 'ECONNREFUSED',
  });
  const plain = { url: 'redis://127.0.0.1:20001' };
  const answered = new Set(['127.0.0.1:20001']);
  const never = new Set<string>();
  const TLS_ADVICE = /TLS|rediss/;

  it('never ready for this process: a reset is the TLS hint (as before)', () => {
    const outage = redisOutage(maxRetries, plain, reset, never);
    expect(outage.cause).toBe('tls');
    expect(outage.line).toBe(
      'redis: 127.0.0.1:20001 closed the connection; if it expects TLS, use a rediss:// URL',
    );
    expect(redisConnectionLost(reset, plain, never)).toBeNull();
  });

  it('had been ready: a reset, a broken pipe or a closed connection is "connection lost", cause disconnected', () => {
    for (const [err, socketError] of [
      [maxRetries, reset],
      [maxRetries, pipe],
      [closed, null],
      [closed, reset],
      [maxRetries, null],
    ] as const) {
      const outage = redisOutage(err, plain, socketError, answered);
      expect(outage).toEqual({
        dependency: 'redis',
        cause: 'disconnected',
        line: 'redis 127.0.0.1:20001: connection lost',
        refusal: null,
      });
      expect(retryLine(outage, 400)).toBe('redis 127.0.0.1:20001: connection lost; retrying in 0.4 s');
      expect(outage.line).not.toMatch(TLS_ADVICE);
    }
    expect(redisRefusal(reset, plain, answered)).toBeNull();
    expect(redisRefusal(closed, plain, answered)).toBeNull();
    expect(redisConnectionLost(reset, plain, answered)).toBe('127.0.0.1:20001');
    expect(redisUnreachable(closed, plain, answered)?.message).toBe(
      'redis 127.0.0.1:20001: connection lost; check --redis (or STREAMFENCE_REDIS_URL) and that Redis is running there',
    );
  });

  it('a refused reconnect is "connection refused", answered before or not', () => {
    for (const set of [answered, never]) {
      const outage = redisOutage(maxRetries, plain, refusedHere, set);
      expect(outage).toMatchObject({ cause: 'connection', refusal: null });
      expect(outage.line).toBe('redis 127.0.0.1:20001: connection refused');
    }
  });

  it('a command timed out after the socket was reset is the lost connection; without a reset, a timeout', () => {
    const timedOut = new Error('Command timed out');
    expect(redisOutage(timedOut, plain, reset, answered).cause).toBe('disconnected');
    expect(redisOutage(timedOut, plain, null, answered)).toMatchObject({
      cause: 'timeout',
      line: 'redis 127.0.0.1:20001: no answer (timed out)',
    });
  });

  it('never ready and no socket error: "no connection", never "lost"', () => {
    expect(redisOutage(maxRetries, plain, null, never)).toMatchObject({
      cause: 'connection',
      line: 'redis 127.0.0.1:20001: no connection',
    });
  });

  it('a TLS Redis that had answered and drops a handshake is lost; a bad certificate stays a TLS refusal', () => {
    const tlsUrl = { url: 'rediss://127.0.0.1:20001' };
    const dropped = Object.assign(
      new Error('Client network socket disconnected before secure TLS connection was established'),
      { code: 'ECONNRESET' },
    );
    expect(redisOutage(closed, tlsUrl, dropped, answered)).toMatchObject({ cause: 'disconnected' });
    expect(redisOutage(closed, tlsUrl, dropped, never).refusal?.code).toBe('TLS_FAILED');
    const expired = Object.assign(new Error('certificate has expired'), { code: 'CERT_HAS_EXPIRED' });
    const outage = redisOutage(closed, tlsUrl, expired, answered);
    expect(outage).toMatchObject({ cause: 'tls' });
    expect(outage.refusal?.code).toBe('TLS_FAILED');
  });

  it('a wrong password after a restart stays a final refusal, answered before or not', () => {
    const wrongPass = new Error('WRONGPASS invalid username-password pair or user is disabled.');
    expect(redisOutage(closed, plain, wrongPass, answered).refusal?.code).toBe('AUTH_FAILED');
  });
});
