/**
 * `streamfence inspect [SENSOR...]`: one JSON line per sensor from the live monitor's checkpoints
 * in Redis (all sensors when none are named): lifetime count, baseline, active alert, partition.
 */
import { StreamfenceError } from '../../../libs/errors/index.js';
import { ENV } from '../../config/env.js';
import { describeSensor, storedSensors } from '../inspect-state.js';
import {
  REDIS_OPTIONS,
  connectRedisOnce,
  connectionHelp,
  describeRedis,
  redisFailure,
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

  --state-prefix <p>     key prefix the monitor used (default streamfence; env ${ENV.statePrefix})
  --group <g>            only this consumer group (default: every group under the prefix; env ${ENV.group})
  --input-topic <t>      only this input topic (default: every topic; env ${ENV.inputTopic})
  --config <file>        decode with this engine config (default: the one the monitor stored; env ${ENV.configFile})
  -h, --help             this help

Exit code 0 when state was printed; 2 with [NOT_FOUND] when a named sensor has no state or
nothing at all is stored under the prefix (and group and topic) given.

${connectionHelp({ redis: true })}
inspect only reads: a Redis user limited to read commands on the state keys is enough.
`;

/** inspect's own options (the Redis connection options are services/connect's). */
export const OPTIONS = {
  'state-prefix': { type: 'string' },
  group: { type: 'string' },
  'input-topic': { type: 'string' },
  config: { type: 'string' },
} as const;

/** The environment variable of each option, shared with `run` (a flag wins over its variable). */
export const OPTION_ENV: Record<keyof typeof OPTIONS, string> = {
  'state-prefix': ENV.statePrefix,
  group: ENV.group,
  'input-topic': ENV.inputTopic,
  config: ENV.configFile,
};

export async function main(argv: string[]): Promise<number> {
  const parsed = parseCommandArgs(
    CMD,
    argv,
    { ...parseArgsOptions(REDIS_OPTIONS), ...OPTIONS },
    true,
    OPTION_ENV,
  );
  if (parsed.help) return printHelp(HELP);
  const redisSettings = readRedisSettings(parsed.values, process.env, { cmd: CMD, required: true });
  const prefix = stringOption(parsed, 'state-prefix', CMD) ?? 'streamfence';
  const group = stringOption(parsed, 'group', CMD);
  const topic = stringOption(parsed, 'input-topic', CMD);
  // Without --config, each sensor is decoded with the config the monitor stored beside its state.
  const configFile = stringOption(parsed, 'config', CMD);
  const config = configFile === undefined ? undefined : loadEngineConfig(configFile);
  const only = parsed.positionals.length ? new Set(parsed.positionals) : undefined;
  const found = new Set<string>();
  const redis = await connectRedisOnce(redisSettings);
  try {
    for await (const s of storedSensors(redis, prefix, { group, topic, only, config })) {
      found.add(s.state.sensor);
      process.stdout.write(`${JSON.stringify(describeSensor(s))}\n`);
    }
  } catch (e) {
    throw redisFailure(e, redisSettings);
  } finally {
    redis.disconnect();
  }
  const scope = [`prefix "${prefix}"`, group && `group "${group}"`, topic && `input topic "${topic}"`]
    .filter(Boolean)
    .join(', ');
  const missing = only ? [...only].filter((s) => !found.has(s)) : [];
  if (missing.length) {
    throw new StreamfenceError(
      'NOT_FOUND',
      `no stored state for ${missing.map((s) => `"${s}"`).join(', ')} under ${scope}`,
    );
  }
  if (found.size === 0) {
    // An empty answer is almost always a wrong prefix, group or topic, so it is said, not printed as nothing.
    throw new StreamfenceError(
      'NOT_FOUND',
      `no sensor state under ${scope} in Redis ${describeRedis(redisSettings).redis as string}: check --state-prefix, --group and --input-topic against the monitor's, or wait for its first checkpoint`,
    );
  }
  return 0;
}
