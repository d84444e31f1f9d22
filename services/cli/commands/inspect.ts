/**
 * `streamfence inspect [SENSOR...]`: one JSON line per sensor from the live monitor's checkpoints
 * in Redis (all sensors when none are named): lifetime count, baseline, active alert, partition.
 */
import { readFileSync } from 'node:fs';
import { parseArgs } from 'node:util';
import { parseConfigText } from '../../../libs/config/config.js';
import { StreamfenceError } from '../../../libs/errors/index.js';
import { ENV } from '../../config/env.js';
import { describeSensor, storedSensors } from '../../monitor/inspect-state.js';
import {
  REDIS_OPTIONS,
  buildRedis,
  redisRefusal,
  connectionHelp,
  parseArgsOptions,
  readRedisSettings,
} from '../../connect/index.js';

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
  let parsed;
  try {
    parsed = parseArgs({
      args: argv,
      allowPositionals: true,
      strict: true,
      options: {
        ...parseArgsOptions(REDIS_OPTIONS),
        'state-prefix': { type: 'string' },
        group: { type: 'string' },
        'input-topic': { type: 'string' },
        config: { type: 'string' },
        help: { type: 'boolean' },
      },
    });
  } catch (e) {
    throw new StreamfenceError('ARGS_INVALID', `${(e as Error).message}. Run "streamfence inspect --help".`);
  }
  const v = parsed.values;
  if (v.help) {
    process.stdout.write(HELP);
    return 0;
  }
  const redisSettings = readRedisSettings(v, process.env, { cmd: 'inspect', required: true });
  const prefix = v['state-prefix'] ?? process.env[ENV.statePrefix] ?? 'streamfence';
  let config;
  if (v.config) {
    let text: string;
    try {
      text = readFileSync(v.config, 'utf8');
    } catch (e) {
      throw new StreamfenceError(
        'INPUT_UNREADABLE',
        `cannot read the config file ${v.config}: ${(e as Error).message}`,
      );
    }
    config = parseConfigText(text, v.config);
  }
  const redis = buildRedis(redisSettings);
  const only = parsed.positionals.length ? new Set(parsed.positionals) : undefined;
  const found = new Set<string>();
  try {
    try {
      await redis.connect();
    } catch (e) {
      const refused = redisRefusal(e, redisSettings);
      if (refused) throw refused;
      throw new StreamfenceError(
        'SERVICE_UNAVAILABLE',
        `cannot reach Redis: ${(e as Error).message}; check --redis`,
      );
    }
    for await (const s of storedSensors(redis, prefix, {
      group: v.group,
      topic: v['input-topic'],
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
