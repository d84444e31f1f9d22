/**
 * `streamfence simulate`: generate an invented plant data set with labelled faults, to a file or
 * a Kafka topic. Deterministic: the same options and seed give byte-identical files.
 */
import { parseDuration } from '../../../libs/config/duration.js';
import { formatLabelsCsv } from '../../../libs/scoring/labels.js';
import { DEFAULT_SCENARIO, PlantSimulator, SCENARIOS, suggestedConfig } from '../../../libs/sim/plant.js';
import { ENV } from '../../config/env.js';
import {
  KAFKA_OPTIONS,
  checkKafka,
  connectionHelp,
  parseArgsOptions,
  readKafkaSettings,
} from '../../connect/index.js';
import { Progress, formatCount, formatSeconds } from '../../progress.js';
import {
  configText,
  formatFromPath,
  produceReadings,
  writeReadings,
  writeText,
} from '../../simulate/write.js';
import {
  numberOption,
  optionLabel,
  parseCommandArgs,
  parseNumber,
  parseTimeValue,
  printBanner,
  envHelp,
  printHelp,
  stringOption,
  usageError,
  warnNoEffect,
} from '../../setup/args.js';

const CMD = 'simulate';
const DEFAULT_START = '2026-01-05T00:00:00Z';

export const HELP = `Usage: streamfence simulate (--readings FILE | --kafka TOPIC) [options]

Generate readings from an invented plant, with injected faults and their labels.

  --scenario NAME     ${Object.keys(SCENARIOS).join(' or ')} (default ${DEFAULT_SCENARIO})
  --duration D        how much data, e.g. 2d, 36h (default 2d)
  --interval D        reading interval of each sensor, e.g. 60s, 1m (default 1m)
  --sensors N         how many sensors (default: the scenario's set; more repeat its units)
  --seed N            random seed (default 1); same seed, same data
  --start TIME        reading time of the first reading, ISO-8601 with a zone or epoch ms
                      (default ${DEFAULT_START}; with --kafka the default ends the span at the
                      current time, so the topic's retention keeps the data)
  --readings FILE     readings file: .ndjson or .csv (or say --format). (--out is an output
                      folder in replay and tune; simulate writes named files)
  --format F          ndjson or csv
  --labels FILE       fault labels as CSV: sensor,start,end,kind (ISO-8601 UTC times)
  --no-faults         no injected faults
  --kafka TOPIC       produce the readings to this Kafka topic (created if missing), keyed by sensor
  --config-out FILE   the scenario's suggested engine config (.json for JSON, otherwise YAML)
  --list              list the scenarios and their sensors, then exit
  -h, --help          this help

${connectionHelp({ kafka: true })}
With --kafka and no --brokers, ${ENV.brokers} or else 127.0.0.1:9092.

Fault kinds: spike, step, drift, stuck, noise, dropout; water-supply also plants timeshift (the
level of another time of day, e.g. the daytime flow at night) on sensors with a strong daily cycle.
The suggested config assumes readings about once a minute (minSamples and flatlineAfter count
readings); for water-supply it sets profile: daily in the plant's time zone.
`;

function duration(v: string, name: string): number {
  const ms = parseDuration(v);
  if (ms === null || ms <= 0)
    usageError(`--${name} must be a duration such as 30s, 15m, 2d; got "${v}"`, CMD);
  return ms!;
}

function listScenarios(): string {
  const lines: string[] = [];
  for (const [name, s] of Object.entries(SCENARIOS)) {
    lines.push(`${name}: ${s.title}`, `  ${s.description}`);
    const sim = new PlantSimulator({
      seed: 1,
      start: 0,
      durationMs: 1000,
      intervalMs: 1000,
      scenario: name,
      faults: false,
    });
    for (const x of sim.sensors()) lines.push(`    ${x.id.padEnd(44)} ${x.unit.padEnd(6)} ${x.description}`);
  }
  return `${lines.join('\n')}\n`;
}

/** simulate's own options (the Kafka connection options are services/connect's). */
export const OPTIONS = {
  scenario: { type: 'string' },
  duration: { type: 'string' },
  interval: { type: 'string' },
  sensors: { type: 'string' },
  seed: { type: 'string' },
  start: { type: 'string' },
  readings: { type: 'string' },
  format: { type: 'string' },
  labels: { type: 'string' },
  'no-faults': { type: 'boolean' },
  kafka: { type: 'string' },
  'config-out': { type: 'string' },
  list: { type: 'boolean' },
  out: { type: 'string' },
} as const;

/**
 * The environment variable of each option (a flag wins). `--list` is an action, not a setting, and
 * `--out` is only there to be refused with a pointer to --readings.
 */
export const OPTION_ENV: Record<Exclude<keyof typeof OPTIONS, 'list' | 'out'>, string> = {
  scenario: ENV.scenario,
  duration: ENV.simDuration,
  interval: ENV.simInterval,
  sensors: ENV.simSensors,
  seed: ENV.seed,
  start: ENV.simStart,
  readings: ENV.simReadings,
  format: ENV.simFormat,
  labels: ENV.simLabels,
  'no-faults': ENV.simNoFaults,
  kafka: ENV.simKafkaTopic,
  'config-out': ENV.simConfigOut,
};

type SimulateArgs = ReturnType<typeof parseSimulateArgs>;

function parseSimulateArgs(argv: string[]) {
  return parseCommandArgs(CMD, argv, { ...OPTIONS, ...parseArgsOptions(KAFKA_OPTIONS) }, false, OPTION_ENV);
}

/** Where the output goes: a readings file or a Kafka topic, and the optional config and labels files. */
interface Destinations {
  out: string | undefined;
  topic: string | undefined;
  configOut: string | undefined;
  labelsOut: string | undefined;
}

/** The output options, checked: at least one destination, not both a file and a topic. */
function readDestinations(args: SimulateArgs): Destinations {
  const s = (name: string) => stringOption(args, name, CMD);
  if (args.values.out !== undefined)
    usageError(
      '--out is an output folder in replay and tune; simulate writes named files: give the readings file with --readings FILE',
      CMD,
    );
  const out = s('readings');
  const topic = s('kafka');
  const configOut = s('config-out');
  const labelsOut = s('labels');
  if (out === undefined && topic === undefined && configOut === undefined && labelsOut === undefined) {
    usageError('say where the data goes: --readings FILE (.ndjson or .csv) or --kafka TOPIC', CMD);
  }
  if (out !== undefined && topic !== undefined)
    usageError('give either --readings or --kafka, not both', CMD);
  if (topic === undefined)
    warnNoEffect(CMD, args, Object.keys(KAFKA_OPTIONS), 'without --kafka: only --kafka connects to Kafka');
  if (out === undefined)
    warnNoEffect(CMD, args, ['format'], 'without --readings: it is the readings file format');
  return { out, topic, configOut, labelsOut };
}

/** The simulator's options from the command line; `startText` is --start as given (if it was). */
function readSimulatorOptions(args: SimulateArgs, topic: string | undefined) {
  const s = (name: string) => stringOption(args, name, CMD);
  const seed = numberOption(args, 'seed', CMD, { whole: true, min: -(2 ** 32), max: 2 ** 32, fallback: 1 });
  const durationMs = duration(s('duration') ?? '2d', 'duration');
  const intervalMs = duration(s('interval') ?? '1m', 'interval');
  const startText = s('start');
  let startTs: number;
  if (startText === undefined && topic !== undefined) {
    // A broker deletes messages older than its retention at once, so data for a topic ends now
    // (on a whole interval) instead of at a fixed past date that a short retention would drop.
    startTs = Math.floor((Date.now() - durationMs) / intervalMs) * intervalMs;
  } else {
    startTs = parseTimeValue(startText ?? DEFAULT_START, optionLabel(args, 'start'), CMD);
  }
  const scenario = s('scenario') ?? DEFAULT_SCENARIO;
  const options = {
    seed,
    start: startTs,
    durationMs,
    intervalMs,
    sensors:
      s('sensors') === undefined
        ? undefined
        : parseNumber(s('sensors')!, optionLabel(args, 'sensors'), { whole: true, above: 0 }, CMD),
    faults: args.values['no-faults'] !== true,
    scenario,
  };
  return { options, startText };
}

export async function main(argv: string[]): Promise<number> {
  const args = parseSimulateArgs(argv);
  if (args.help) return printHelp(HELP + envHelp(OPTION_ENV));
  if (args.values.list === true) {
    process.stdout.write(listScenarios());
    return 0;
  }
  const { out, topic, configOut, labelsOut } = readDestinations(args);
  const connection =
    topic === undefined
      ? undefined
      : readKafkaSettings(args.values, process.env, { cmd: CMD, defaultBrokers: '127.0.0.1:9092' });
  const format = out !== undefined ? formatFromPath(out, stringOption(args, 'format', CMD)) : undefined;
  const { options: opts, startText } = readSimulatorOptions(args, topic);
  const { scenario, start: startTs, durationMs, intervalMs } = opts;
  const sim = new PlantSimulator(opts);

  // Kafka is checked before anything is written, so an unreachable broker is one line at once.
  if (connection !== undefined)
    await checkKafka(connection, {
      clientId: 'streamfence-simulate',
      what: `create or write topic ${topic}`,
    });
  printBanner(CMD);
  if (configOut !== undefined)
    await writeText(configOut, configText(configOut, suggestedConfig(scenario, intervalMs)));
  if (labelsOut !== undefined) await writeText(labelsOut, formatLabelsCsv(sim.labels()));

  const expected = sim.sensors().length * Math.ceil(opts.durationMs / opts.intervalMs);
  const progress = new Progress({ unit: 'readings', total: expected });
  const onProgress = (n: number) => progress.update(n, n);
  let n = 0;
  let where = '';
  if (out !== undefined) {
    n = await writeReadings(sim, out, format!, onProgress);
    where = out;
  } else if (topic !== undefined) {
    n = await produceReadings(sim, topic, connection!, onProgress);
    where = `Kafka topic ${topic}, reading times ${new Date(startTs).toISOString()} to ${new Date(startTs + durationMs).toISOString()}${startText === undefined ? ' (ending now, so the retention keeps them)' : ''}`;
  }
  const labels = sim.labels().length;
  progress.finish(
    `streamfence simulate: ${scenario}, ${sim.sensors().length} sensors, ${formatCount(n)} readings, ${labels} labelled faults` +
      (where ? ` -> ${where}` : '') +
      ` in ${formatSeconds(progress.elapsedSeconds)}`,
  );
  return 0;
}
