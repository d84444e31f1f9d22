/**
 * `streamfence tune INPUT --labels FILE --out DIR`: score a grid of detection settings against
 * labelled history and recommend one.
 */
import { availableParallelism } from 'node:os';
import { DEFAULT_GRID_SPEC } from '../../../libs/tuning/grid.js';
import { ALERT_BUDGET_PER_HOUR } from '../../../libs/schema/vocabulary.js';
import { DEFAULT_GRACE_MS } from '../../../libs/scoring/score.js';
import { parseDuration } from '../../../libs/config/duration.js';
import { runTune } from '../../tune/tune.js';
import { ENV } from '../../config/env.js';
import {
  optionLabel,
  parseCommandArgs,
  parseNumber,
  printBanner,
  envHelp,
  printHelp,
  stringOption,
  usageError,
} from '../../setup/args.js';

const CMD = 'tune';

export const HELP = `Usage: streamfence tune INPUT --labels FILE --out DIR [options]

Replay labelled history with every combination of a grid of settings, score each, and recommend
one within an alert-rate budget: no flood where one can be avoided, recall within 2 points of the
best, then the fewest raised alerts per caught incident, then precision (README: Tuning).

INPUT             readings file (NDJSON or CSV, optionally .gz), read once
  --labels FILE     incidents as CSV with header sensor,start,end[,kind]; reading times, ISO-8601
                    with a zone
  --out DIR         writes tuning.json, tuning.csv, recommended.json (and report.html when available)
  --config FILE     base config (YAML or JSON); default: built-in defaults
  --grid SPEC       settings to try (default: ${DEFAULT_GRID_SPEC})
                    keys fenceK, zLimit, trigger, debounce (raiseAfter/raiseWindow), clearAfter,
                    flatlineAfter, deadband, clearDelay (a duration, or 10readings: ten of the
                    data's median reading intervals); lists with "," and numeric ranges
                    from:to:step; parts joined by ";". A key left out keeps the base config's value.
  --budget N        raised alerts per hour allowed over the whole input (default ${ALERT_BUDGET_PER_HOUR})
  --grace D         time after an incident's end in which an alert still counts (default ${DEFAULT_GRACE_MS / 1000}s)
  --workers N       worker threads (default ${availableParallelism()} here: the number of CPUs)
  --format F        ndjson or csv, when the extension does not say
  -h, --help        this help

Scoring: an incident is caught when an alert is raised on its sensor between its start and its end
plus the grace; a raised alert is true when it falls in such an interval. Dropouts are left out of
the headline recall (the engine has no missing-data rule) but reported per kind.
`;

/** tune's options. */
export const OPTIONS = {
  labels: { type: 'string' },
  out: { type: 'string' },
  config: { type: 'string' },
  grid: { type: 'string' },
  budget: { type: 'string' },
  grace: { type: 'string' },
  workers: { type: 'string' },
  format: { type: 'string' },
} as const;

/** The environment variable of each option (a flag wins over its variable). */
export const OPTION_ENV: Record<keyof typeof OPTIONS, string> = {
  labels: ENV.tuneLabels,
  out: ENV.outDir,
  config: ENV.configFile,
  grid: ENV.tuneGrid,
  budget: ENV.alertBudget,
  grace: ENV.tuneGrace,
  workers: ENV.tuneWorkers,
  format: ENV.inputFormat,
};

export async function main(argv: string[]): Promise<number> {
  const args = parseCommandArgs(CMD, argv, OPTIONS, true, OPTION_ENV);
  if (args.help) return printHelp(HELP + envHelp(OPTION_ENV));
  if (args.positionals.length !== 1)
    usageError(
      'give one readings file, e.g. streamfence tune data.ndjson --labels labels.csv --out tuning',
      CMD,
    );
  const s = (n: string) => stringOption(args, n, CMD);
  const labels = s('labels') ?? usageError('--labels FILE is required (CSV: sensor,start,end,kind)', CMD);
  const out = s('out') ?? usageError('--out DIR is required', CMD);
  const budgetRaw = s('budget');
  const budget =
    budgetRaw === undefined
      ? undefined
      : parseNumber(budgetRaw, optionLabel(args, 'budget'), { above: 0, what: 'alerts per hour' }, CMD);
  const workersRaw = s('workers');
  const workers =
    workersRaw === undefined
      ? undefined
      : parseNumber(workersRaw, optionLabel(args, 'workers'), { whole: true, min: 1, max: 256 }, CMD);
  let graceMs: number | undefined;
  if (s('grace') !== undefined) {
    const g = parseDuration(s('grace'));
    if (g === null)
      usageError(
        `${optionLabel(args, 'grace')} must be a duration of 0 or more, such as 120s or 5m, got "${s('grace')}"`,
        CMD,
      );
    graceMs = g!;
  }
  await runTune({
    input: args.positionals[0],
    format: s('format'),
    labels,
    config: s('config'),
    grid: s('grid'),
    budget,
    out,
    workers,
    graceMs,
    onStart: () => printBanner(CMD),
  });
  return 0;
}
