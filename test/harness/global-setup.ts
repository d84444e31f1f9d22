/**
 * vitest globalSetup for the integration project: finds a real Kafka broker and a real Redis, proves
 * they answer, and hands their addresses to the tests (inject('streamfenceServices'), see services.ts).
 *
 * Discovery, per service, first hit wins:
 *   1. explicit env: STREAMFENCE_TEST_BROKERS (comma-separated host:port), STREAMFENCE_TEST_REDIS_URL
 *   2. testcontainers, only when a Docker engine answers (STREAMFENCE_TEST_NO_DOCKER=1 skips this)
 *   3. the local stack: $STREAMFENCE_STACK_DIR/env (default .stack/env), running
 *      deploy/local/stack-up.sh first when it is missing or stale
 * A service that cannot be found or does not answer fails the run with the reason; integration tests
 * are never skipped, under CI=true or not.
 */
import { spawn } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import type { TestProject } from 'vitest/node';
import type { StartedTestContainer } from 'testcontainers';
import type { HarnessServices, ServiceSource } from './context.js';
import { dockerAnswers, kafkaProblem, redisProblem } from './probe.js';

const REPO_ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
const STACK_DIR = process.env.STREAMFENCE_STACK_DIR ?? path.join(REPO_ROOT, '.stack');
const STACK_ENV_FILE = path.join(STACK_DIR, 'env');
const IN_CI = process.env.CI === 'true' || process.env.CI === '1';

// Images for the Docker path. cp-kafka 7.9 ships Apache Kafka 3.9, the version of the local stack;
// @testcontainers/kafka configures the listeners for Confluent's image layout.
const KAFKA_IMAGE = process.env.STREAMFENCE_TEST_KAFKA_IMAGE ?? 'confluentinc/cp-kafka:7.9.0';
const REDIS_IMAGE = process.env.STREAMFENCE_TEST_REDIS_IMAGE ?? 'redis:7.2-alpine';

interface Found {
  brokers?: string[];
  redisUrl?: string;
  kafkaSource?: ServiceSource;
  redisSource?: ServiceSource;
}

const log = (msg: string) => process.stderr.write(`harness: ${msg}\n`);

function fail(msg: string): never {
  const hint = IN_CI
    ? 'CI=true: integration tests need real services and are never skipped.'
    : 'Start them with `npm run stack:up`, or point STREAMFENCE_TEST_BROKERS / STREAMFENCE_TEST_REDIS_URL at running ones.';
  throw new Error(`streamfence test harness: ${msg}\n${hint}`);
}

const splitBrokers = (s: string) =>
  s
    .split(',')
    .map((b) => b.trim())
    .filter(Boolean);

function readStackEnv(): Record<string, string> | undefined {
  if (!existsSync(STACK_ENV_FILE)) return undefined;
  const out: Record<string, string> = {};
  for (const line of readFileSync(STACK_ENV_FILE, 'utf8').split('\n')) {
    const m = /^([A-Z0-9_]+)=(.*)$/.exec(line.trim());
    if (m) out[m[1]] = m[2];
  }
  return out;
}

function runStackUp(): Promise<void> {
  const script = path.join(REPO_ROOT, 'deploy/local/stack-up.sh');
  log(`local stack not up: running ${path.relative(REPO_ROOT, script)}`);
  return new Promise((resolve, reject) => {
    // Its progress goes to our stderr so a slow first start (Maven fetch) is visible.
    const child = spawn('bash', [script], {
      cwd: REPO_ROOT,
      stdio: ['ignore', process.stderr, process.stderr],
    });
    child.on('error', reject);
    child.on('exit', (code) =>
      code === 0 ? resolve() : reject(new Error(`deploy/local/stack-up.sh exited with ${code}`)),
    );
  });
}

async function fromLocalStack(found: Found): Promise<void> {
  const answers = async (env: Record<string, string> | undefined) =>
    env !== undefined &&
    (found.brokers !== undefined ||
      (env.STREAMFENCE_TEST_BROKERS !== undefined &&
        (await kafkaProblem(splitBrokers(env.STREAMFENCE_TEST_BROKERS), 3_000)) === undefined)) &&
    (found.redisUrl !== undefined ||
      (env.STREAMFENCE_TEST_REDIS_URL !== undefined &&
        (await redisProblem(env.STREAMFENCE_TEST_REDIS_URL)) === undefined));

  let env = readStackEnv();
  if (!(await answers(env))) {
    try {
      await runStackUp();
    } catch (err) {
      fail(`could not bring up the local stack: ${(err as Error).message}`);
    }
    env = readStackEnv();
    // Left running on purpose: the next test run starts in a second instead of several.
    log('local stack left running for the next run; `npm run stack:down` stops it');
  }
  if (env === undefined) fail(`stack-up.sh ran but wrote no ${STACK_ENV_FILE}`);
  if (found.brokers === undefined && env.STREAMFENCE_TEST_BROKERS) {
    found.brokers = splitBrokers(env.STREAMFENCE_TEST_BROKERS);
    found.kafkaSource = 'local-stack';
  }
  if (found.redisUrl === undefined && env.STREAMFENCE_TEST_REDIS_URL) {
    found.redisUrl = env.STREAMFENCE_TEST_REDIS_URL;
    found.redisSource = 'local-stack';
  }
}

async function fromContainers(found: Found, started: StartedTestContainer[]): Promise<void> {
  if (found.brokers === undefined) {
    log(`Docker answers: starting ${KAFKA_IMAGE}`);
    const { KafkaContainer } = await import('@testcontainers/kafka');
    const kafka = await new KafkaContainer(KAFKA_IMAGE)
      .withKraft()
      .withEnvironment({ KAFKA_AUTO_CREATE_TOPICS_ENABLE: 'false' })
      .start();
    started.push(kafka);
    found.brokers = [`${kafka.getHost()}:${kafka.getMappedPort(9093)}`];
    found.kafkaSource = 'testcontainers';
  }
  if (found.redisUrl === undefined) {
    log(`Docker answers: starting ${REDIS_IMAGE}`);
    const { RedisContainer } = await import('@testcontainers/redis');
    const redis = await new RedisContainer(REDIS_IMAGE).start();
    started.push(redis);
    found.redisUrl = redis.getConnectionUrl();
    found.redisSource = 'testcontainers';
  }
}

export default async function setup(project: TestProject): Promise<() => Promise<void>> {
  const found: Found = {};
  const started: StartedTestContainer[] = [];
  const teardown = async () => {
    await Promise.allSettled(started.map((c) => c.stop()));
  };

  try {
    if (process.env.STREAMFENCE_TEST_BROKERS) {
      found.brokers = splitBrokers(process.env.STREAMFENCE_TEST_BROKERS);
      found.kafkaSource = 'env';
    }
    if (process.env.STREAMFENCE_TEST_REDIS_URL) {
      found.redisUrl = process.env.STREAMFENCE_TEST_REDIS_URL;
      found.redisSource = 'env';
    }
    const missing = () => found.brokers === undefined || found.redisUrl === undefined;
    if (missing() && process.env.STREAMFENCE_TEST_NO_DOCKER !== '1' && (await dockerAnswers())) {
      await fromContainers(found, started);
    }
    if (missing()) await fromLocalStack(found);
    if (found.brokers === undefined || found.brokers.length === 0) fail('no Kafka broker found');
    if (found.redisUrl === undefined) fail('no Redis found');

    // Whatever the source, prove both answer before any test runs.
    const [kafkaWhy, redisWhy] = await Promise.all([
      kafkaProblem(found.brokers),
      redisProblem(found.redisUrl),
    ]);
    if (kafkaWhy)
      fail(`Kafka at ${found.brokers.join(',')} (from ${found.kafkaSource}) does not answer: ${kafkaWhy}`);
    if (redisWhy) fail(`Redis at ${found.redisUrl} (from ${found.redisSource}) does not answer: ${redisWhy}`);
  } catch (err) {
    await teardown();
    throw err;
  }

  const services: HarnessServices = {
    brokers: found.brokers,
    redisUrl: found.redisUrl,
    kafkaSource: found.kafkaSource ?? 'env',
    redisSource: found.redisSource ?? 'env',
  };
  project.provide('streamfenceServices', services);
  log(
    `Kafka ${services.brokers.join(',')} (${services.kafkaSource}), Redis ${services.redisUrl} (${services.redisSource})`,
  );
  return teardown;
}
