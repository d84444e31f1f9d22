/**
 * `streamfence inspect [SENSOR...]`: one JSON line per sensor from the live monitor's checkpoints
 * in Redis (all sensors when none are named): lifetime count, baseline, active alert, partition.
 */
import { StreamfenceError } from '../../../libs/errors/index.js';
import { ENV } from '../../config/env.js';
import { describeSensor, storedSensors } from '../inspect-state.js';
import {
  REDIS_OPTIONS,
  buildRedis,
  connectRedis,
  connectionHelp,
  parseArgsOptions,
  readRedisSettings,
} from '../../connect/index.js';
import { parseCommandArgs, printHelp, stringOption } from '../../setup/args.js';
import { loadEngineConfig } from '../../setup/config-file.js';

const CMD = 'inspect';

const HELP = `Usage: streamfence inspect [SENSOR...] [options]

Prints one JSON line per sensor from the state the live monitor checkpointed in Redis:
sensor, seen, baseline (q1, median, q3, iqr, fences, mean, stdDev, count, from, to),
activeAlert, newestReading, partition. All sensors when none are named.

  --state-prefix <p>     key prefix the monitor used (env ${ENV.statePrefix}; default streamfence)
  --group <g>            only this consumer group (default: every group under the prefix)
  --input-topic <t>      only this input topic (default: every topic)
  --config <file>        decode with this engine config (default: the one the monitor stored)
  --help                 this help

${connectionHelp({ redis: true })}
inspect only reads: a Redis user limited to read commands on the state keys is enough.
`;

export async function main(argv: string[]): Promise<number> {
  const parsed = parseCommandArgs(CMD, argv, {
    ...parseArgsOptions(REDIS_OPTIONS),
    'state-prefix': { type: 'string' },
    group: { type: 'string' },
    'input-topic': { type: 'string' },
    config: { type: 'string' },
  });
  if (parsed.help) return printHelp(HELP);
  const redisSettings = readRedisSettings(parsed.values, process.env, { cmd: CMD, required: true });
  const prefix = stringOption(parsed, 'state-prefix', CMD) ?? process.env[ENV.statePrefix] ?? 'streamfence';
  // Without --config, each sensor is decoded with the config the monitor stored beside its state.
  const configFile = stringOption(parsed, 'config', CMD);
  const config = configFile === undefined ? undefined : loadEngineConfig(configFile);
  const redis = buildRedis(redisSettings);
  const only = parsed.positionals.length ? new Set(parsed.positionals) : undefined;
  const found = new Set<string>();
  try {
    try {
      await connectRedis(redis, redisSettings);
    } catch (e) {
      if (e instanceof StreamfenceError) throw e;
      throw new StreamfenceError(
        'SERVICE_UNAVAILABLE',
        `cannot reach Redis: ${(e as Error).message}; check --redis`,
      );
    }
    for await (const s of storedSensors(redis, prefix, {
      group: stringOption(parsed, 'group', CMD),
      topic: stringOption(parsed, 'input-topic', CMD),
      only,
      config,
    })) {
      found.add(s.state.sensor);
      process.stdout.write(`${JSON.stringify(describeSensor(s))}\n`);
    }
  } finally {
    redis.disconnect();
  }
  const missing = only ? [...only].filter((s) => !found.has(s)) : [];
  if (missing.length) {
    throw new StreamfenceError(
      'NOT_FOUND',
      `no stored state for ${missing.map((s) => `"${s}"`).join(', ')} under prefix "${prefix}"`,
    );
  }
  return 0;
}
