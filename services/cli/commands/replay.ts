/**
 * `streamfence replay INPUT [--config FILE] [--out DIR] [--format ndjson|csv] [--report] [--audit]`:
 * judge a file of readings (or a Kafka time range) with the engine, exactly as the live monitor
 * would in that order, and write the alert events, the rejected lines, a summary and optionally an
 * HTML report into DIR.
 */
import { ALERT_BUDGET_PER_HOUR } from '../../../libs/schema/vocabulary.js';
import {
  numberOption,
  parseCommandArgs,
  printBanner,
  envHelp,
  printHelp,
  optionLabel,
  parseTimeValue,
  stringOption,
  usageError,
  warnNoEffect,
  type ParsedArgs,
} from '../../setup/args.js';
import { ENV } from '../../config/env.js';
import { loadEngineConfig } from '../../setup/config-file.js';
import { Progress, formatCount, formatSeconds } from '../../progress.js';
import { checkInputFile, detectFormat, newInputStats, readInput } from '../../replay/input.js';
import {
  REPLAY_FILES,
  prepareDir,
  runReplay,
  type ReplayObserver,
  type ReplaySummary,
} from '../../replay/replay.js';
import type { InputRecord } from '../../replay/input.js';
import {
  createReportObserver,
  REPORT_DEFAULTS,
  type ReportObserver,
} from '../../../libs/report/replay-report.js';
import type { EngineConfig } from '../../../libs/config/config.js';
import { writeReport, REPORT_FILE } from '../../report/write.js';
import { isKafkaUrl, parseKafkaUrl, KAFKA_URL_EXAMPLE, type KafkaRange } from '../../replay-kafka/url.js';
import { kafkaRangeSource, newKafkaRangeStats } from '../../replay-kafka/source.js';
import {
  KAFKA_OPTIONS,
  checkKafka,
  connectionHelp,
  parseArgsOptions,
  readKafkaSettings,
  type KafkaSettings,
} from '../../connect/index.js';
import { DEFAULT_MAX_SENSORS } from '../../../libs/engine/sensor-budget.js';

const CMD = 'replay';

export const HELP = `Usage: streamfence replay INPUT [--config FILE] [--out DIR] [--format ndjson|csv] [--report] [--audit]
       streamfence replay kafka://TOPIC --brokers HOST:PORT[,...] --from TIME --to TIME [...]

Judge a file of readings (or a Kafka time range) with the detection engine, in order, and write the results.

INPUT           readings file: NDJSON (one {"sensor","ts","value"} per line; .ndjson, .jsonl, .json)
                or CSV with a header naming sensor, ts and value (.csv); a trailing .gz is read compressed;
                or kafka://TOPIC with --brokers, --from, --to (also ${KAFKA_URL_EXAMPLE})
  --config FILE   engine settings (YAML or JSON); default: built-in defaults
  --out DIR       output directory, created if needed (default ./streamfence-out); writes
                  ${REPLAY_FILES.alerts}, ${REPLAY_FILES.rejected} and ${REPLAY_FILES.summary}
  --format F      ndjson or csv, when the extension does not say
  --report        also write ${REPORT_FILE}: counts, alert rate against the budget, charts of the top sensors
  --report-top N  sensors charted in the report (default ${REPORT_DEFAULTS.topN})
  --budget N      alert budget in raised alerts per hour for the report (default ${ALERT_BUDGET_PER_HOUR})
  --max-sensors N most sensors with state at once; readings of new sensors beyond it are
                  rejected as sensor_limit (default ${DEFAULT_MAX_SENSORS})
  --partitions N  judge a file as a live monitor of an N-partition topic would: each sensor on the
                  partition the default Kafka partitioner gives its id, event time for the silent-
                  sensor rule (staleAfter) kept per partition (default 1; a kafka:// input uses the
                  topic's own partitions)
  --audit         compare digest quartiles with exact ones for a sample of sensors (implies --report;
                  the numbers also go to ${REPLAY_FILES.summary} under "audit")
  --from TIME     start of the Kafka range by Kafka message time, inclusive (ISO-8601 with a
                  zone, or epoch ms)
  --to TIME       end of the Kafka range by Kafka message time, exclusive
  -h, --help      this help

${connectionHelp({ kafka: true })}
The connection options apply to a kafka:// input; brokers written in the address win over --brokers.

A Kafka range is read by message timestamp from every partition without committing any offset (a
throwaway consumer group is created and deleted), so it is safe against production topics. Readings
are replayed ordered by reading time, ties by partition then offset.

Blank lines are skipped; every other line that is not an accepted reading is listed in
${REPLAY_FILES.rejected} with its line number and reason. Exit code 0 once the input was read (even
with rejected lines), 2 for unusable arguments, config or input.
`;

/** replay's own options (the Kafka connection options are services/connect's). */
export const OPTIONS = {
  config: { type: 'string' },
  out: { type: 'string' },
  format: { type: 'string' },
  report: { type: 'boolean' },
  'report-top': { type: 'string' },
  budget: { type: 'string' },
  audit: { type: 'boolean' },
  from: { type: 'string' },
  to: { type: 'string' },
  'max-sensors': { type: 'string' },
  partitions: { type: 'string' },
} as const;

/** The environment variable of each option (a flag wins over its variable). */
export const OPTION_ENV: Record<keyof typeof OPTIONS, string> = {
  config: ENV.configFile,
  out: ENV.outDir,
  format: ENV.inputFormat,
  report: ENV.report,
  'report-top': ENV.reportTop,
  budget: ENV.alertBudget,
  audit: ENV.audit,
  from: ENV.replayFrom,
  to: ENV.replayTo,
  'max-sensors': ENV.maxSensors,
  partitions: ENV.replayPartitions,
};

/** `streamfence replay`: judge a file or a Kafka time range and write the results to a folder. */
export async function main(argv: string[]): Promise<number> {
  const args = parseCommandArgs(
    CMD,
    argv,
    { ...OPTIONS, ...parseArgsOptions(KAFKA_OPTIONS) },
    true,
    OPTION_ENV,
  );
  if (args.help) return printHelp(HELP + envHelp(OPTION_ENV));
  const settings = replaySettings(args);
  warnUnused(args, settings);
  const opened = await openInput(settings.input, args);
  const report = settings.wantReport
    ? createReportObserver({ topN: settings.topN, audit: settings.wantAudit, budgetPerHour: settings.budget })
    : null;
  await prepareDir(settings.outDir);
  printBanner(CMD);
  const summary = await runReplay({
    source: opened.source,
    config: settings.config,
    outDir: settings.outDir,
    inputInfo: opened.info,
    observers: report === null ? [] : reportObservers(report),
    progress: opened.update,
    maxSensors: settings.maxSensors,
    partitions: settings.partitions,
  });
  if (report !== null) await writeReport(settings.outDir, report.render(summary));
  finishLine(opened, summary, settings.outDir);
  return 0;
}

type ReplayArgs = ReturnType<typeof parseCommandArgs>;

/** What `replay` was asked to do, every value checked. */
interface ReplaySettings {
  input: string;
  outDir: string;
  config: EngineConfig;
  wantAudit: boolean;
  wantReport: boolean;
  topN: number;
  budget: number;
  maxSensors: number;
  partitions: number;
}

function replaySettings(args: ReplayArgs): ReplaySettings {
  if (args.positionals.length === 0)
    usageError('give the readings file to replay, e.g. streamfence replay readings.ndjson', CMD);
  if (args.positionals.length > 1)
    usageError(`give one input file, got ${args.positionals.length}: ${args.positionals.join(' ')}`, CMD);
  const wantAudit = args.values.audit === true;
  return {
    input: args.positionals[0],
    outDir: stringOption(args, 'out', CMD) ?? './streamfence-out',
    config: loadEngineConfig(stringOption(args, 'config', CMD)),
    wantAudit,
    wantReport: wantAudit || args.values.report === true,
    topN: numberOption(args, 'report-top', CMD, { whole: true, above: 0, fallback: REPORT_DEFAULTS.topN }),
    budget: numberOption(args, 'budget', CMD, { above: 0, fallback: ALERT_BUDGET_PER_HOUR }),
    maxSensors: numberOption(args, 'max-sensors', CMD, {
      whole: true,
      above: 0,
      fallback: DEFAULT_MAX_SENSORS,
    }),
    partitions: numberOption(args, 'partitions', CMD, { whole: true, above: 0, fallback: 1 }),
  };
}

/** One warning line per option given that has no effect with this input or without --report. */
function warnUnused(args: ReplayArgs, settings: ReplaySettings): void {
  if (!settings.wantReport)
    warnNoEffect(CMD, args, ['report-top', 'budget'], 'without --report: only the HTML report uses them');
  if (!isKafkaUrl(settings.input)) {
    warnNoEffect(CMD, args, ['from', 'to'], 'with a file input: only a kafka:// time range uses them');
    warnNoEffect(
      CMD,
      args,
      Object.keys(KAFKA_OPTIONS),
      'with a file input: only a kafka:// input connects to Kafka',
    );
  } else {
    warnNoEffect(CMD, args, ['format'], 'with a kafka:// input: messages are JSON readings');
    warnNoEffect(CMD, args, ['partitions'], 'with a kafka:// input: each message keeps its topic partition');
  }
}

/** Opens the file, or checks Kafka and the topic before a kafka:// range is read. */
async function openInput(input: string, args: ReplayArgs): Promise<OpenedInput> {
  if (!isKafkaUrl(input)) return openFile(input, args);
  const range = kafkaRange(input, args);
  const connection = readKafkaSettings(args.values, process.env, { cmd: CMD, brokers: range.brokers });
  await checkKafka(connection, {
    clientId: 'streamfence-replay',
    required: [range.topic],
    what: `read topic ${range.topic}`,
  });
  return openKafka(range, connection);
}

/** The report observer collects bounded chart data during the replay; its audit numbers go to summary.json. */
function reportObservers(report: ReportObserver): ReplayObserver[] {
  return [
    report,
    {
      summaryFields: () => {
        const audit = report.auditResult();
        return audit === null ? {} : { audit };
      },
    },
  ];
}

function finishLine(opened: OpenedInput, summary: ReplaySummary, outDir: string): void {
  const progress = opened.progress;
  const secs = progress.elapsedSeconds;
  const alerts = summary.alerts;
  progress.finish(
    `streamfence replay: ${opened.count()} ${opened.unit}, ${summary.readings} readings from ${summary.sensors} sensors, ` +
      `${summary.rejected.total} rejected, alerts ${alerts.raised} raised / ${alerts.updated} updated / ${alerts.cleared} cleared ` +
      `-> ${outDir} (${formatSeconds(secs)}, ${formatCount(opened.count() / Math.max(secs, 1e-9))} ${opened.unit}/s)`,
  );
}

/** An input ready to replay: its records, what summary.json says about it, and its progress line. */
interface OpenedInput {
  source: AsyncIterable<InputRecord[]>;
  info: () => Record<string, unknown>;
  progress: Progress;
  update: () => void;
  count: () => number;
  unit: string;
}

function openFile(input: string, args: ParsedArgs): OpenedInput {
  const file = checkInputFile(input);
  const format = detectFormat(input, stringOption(args, 'format', CMD));
  const stats = newInputStats();
  const progress = new Progress({ unit: 'lines', total: file.gzip ? undefined : file.size });
  return {
    source: readInput(input, format, stats),
    info: () => ({ path: input, format, lines: stats.lines, blank: stats.blank }),
    progress,
    update: () => progress.update(stats.lines, stats.bytes),
    count: () => stats.lines,
    unit: 'lines',
  };
}

function openKafka(range: KafkaRange, connection: KafkaSettings): OpenedInput {
  const ks = newKafkaRangeStats();
  const progress = new Progress({ unit: 'messages' });
  return {
    source: kafkaRangeSource({ connection, topic: range.topic, from: range.from, to: range.to, stats: ks }),
    info: () => ({
      kafka: {
        topic: range.topic,
        from: new Date(range.from).toISOString(),
        to: new Date(range.to).toISOString(),
        messages: ks.messages,
        outsideRange: ks.outsideRange,
        partitions: ks.partitions,
      },
    }),
    progress,
    update: () => progress.update(ks.messages),
    count: () => ks.messages,
    unit: 'messages',
  };
}

/** `kafka://TOPIC` with --brokers/--from/--to, or the full `kafka://BROKERS/TOPIC?from=&to=` form. */
function kafkaRange(input: string, args: ParsedArgs): KafkaRange {
  const rest = input.slice('kafka://'.length);
  if (rest.includes('/')) return parseKafkaUrl(input);
  const brokers = readKafkaSettings(args.values, process.env, { cmd: CMD }).brokers.join(',');
  const from = stringOption(args, 'from', CMD);
  const to = stringOption(args, 'to', CMD);
  if (from === undefined || to === undefined)
    usageError('a kafka:// input needs --from TIME and --to TIME', CMD);
  const time = (name: string, v: string): number => parseTimeValue(v, optionLabel(args, name), CMD);
  const q = new URLSearchParams({ from: String(time('from', from)), to: String(time('to', to)) });
  return parseKafkaUrl(`kafka://${brokers}/${rest}?${q.toString()}`);
}
