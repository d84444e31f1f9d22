/**
 * `streamfence replay INPUT [--config FILE] [--out DIR] [--format ndjson|csv]`: judge a file of
 * readings with the engine, exactly as the live monitor would in that order, and write the alert
 * events, the rejected lines and a summary into DIR.
 */
import { readFile, stat } from 'node:fs/promises';
import { defaultConfig, parseConfigText, type EngineConfig } from '../../../libs/config/config.js';
import { StreamfenceError } from '../../../libs/errors/index.js';
import { parseCommandArgs, printBanner, printHelp, stringOption, usageError } from '../args.js';
import { Progress, formatCount, formatSeconds } from '../../progress.js';
import { detectFormat, isGzipPath, newInputStats, readInput, unreadable } from '../../replay/input.js';
import { REPLAY_FILES, runReplay } from '../../replay/replay.js';

const CMD = 'replay';

export const HELP = `Usage: streamfence replay INPUT [--config FILE] [--out DIR] [--format ndjson|csv]

Judge a file of readings with the detection engine, in file order, and write the results.

INPUT           readings file: NDJSON (one {"sensor","ts","value"} per line; .ndjson, .jsonl, .json)
                or CSV with a header naming sensor, ts and value (.csv); a trailing .gz is read compressed
  --config FILE   engine settings (YAML or JSON); default: built-in defaults
  --out DIR       output directory, created if needed (default ./streamfence-out); writes
                  ${REPLAY_FILES.alerts}, ${REPLAY_FILES.rejected} and ${REPLAY_FILES.summary}
  --format F      ndjson or csv, when the extension does not say
  -h, --help      this help

Blank lines are skipped; every other line that is not an accepted reading is listed in
${REPLAY_FILES.rejected} with its line number and reason. Exit code 0 once the input was read (even
with rejected lines), 2 for unusable arguments, config or input.
`;

async function loadConfig(path: string | undefined): Promise<EngineConfig> {
  if (path === undefined) return defaultConfig();
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code;
    const why =
      code === 'ENOENT' ? 'no such file' : code === 'EISDIR' ? 'it is a directory' : (err as Error).message;
    throw new StreamfenceError('CONFIG_INVALID', `cannot read config "${path}": ${why}; check --config`, {
      cause: err,
    });
  }
  return parseConfigText(text, path);
}

export async function main(argv: string[]): Promise<number> {
  const args = parseCommandArgs(CMD, argv, {
    config: { type: 'string' },
    out: { type: 'string' },
    format: { type: 'string' },
  });
  if (args.help) return printHelp(HELP);
  if (args.positionals.length === 0)
    usageError('give the readings file to replay, e.g. streamfence replay readings.ndjson', CMD);
  if (args.positionals.length > 1)
    usageError(`give one input file, got ${args.positionals.length}: ${args.positionals.join(' ')}`, CMD);
  const input = args.positionals[0];
  const outDir = stringOption(args, 'out', CMD) ?? './streamfence-out';
  const format = detectFormat(input, stringOption(args, 'format', CMD));
  const config = await loadConfig(stringOption(args, 'config', CMD));

  let size: number;
  try {
    const st = await stat(input);
    if (st.isDirectory()) throw Object.assign(new Error('is a directory'), { code: 'EISDIR' });
    size = st.size;
  } catch (err) {
    throw unreadable(input, err);
  }

  printBanner(CMD);
  const stats = newInputStats();
  const progress = new Progress({ unit: 'lines', total: isGzipPath(input) ? undefined : size });
  const summary = await runReplay({
    source: readInput(input, format, stats),
    config,
    outDir,
    inputInfo: () => ({ path: input, format, lines: stats.lines, blank: stats.blank }),
    progress: () => progress.update(stats.lines, stats.bytes),
  });
  const secs = progress.elapsedSeconds;
  const a = summary.alerts;
  progress.finish(
    `streamfence replay: ${stats.lines} lines, ${summary.readings} readings from ${summary.sensors} sensors, ` +
      `${summary.rejected.total} rejected, alerts ${a.raised} raised / ${a.updated} updated / ${a.cleared} cleared ` +
      `-> ${outDir} (${formatSeconds(secs)}, ${formatCount(stats.lines / Math.max(secs, 1e-9))} lines/s)`,
  );
  return 0;
}
