/**
 * `streamfence demo`: the simulated plant, judged by the real engine, shown on the operator board.
 * Everything is in-process (no Kafka, no Redis), so it is the quickest way to see the product.
 */
import { parseDuration } from '../../../libs/config/duration.js';
import { NOTICE } from '../../../libs/schema/notice.js';
import { DEFAULT_SCENARIO, SCENARIOS } from '../../../libs/sim/plant.js';
import { MIN_BOARD_TOKEN_LENGTH, boardTokenFor, readBoardToken, refuseTokenFlag } from '../../board/auth.js';
import { ENV } from '../../config/env.js';
import { errorCode } from '../../fs-errors.js';
import { DemoFeed } from '../../board/demo-feed.js';
import { BoardHub } from '../../board/hub.js';
import { GROUP_ARG_OPTIONS, GROUP_HELP, readGroupRule } from '../../board/group-options.js';
import { createDemoMetrics } from '../../metrics/board-metrics.js';
import { startBoardServer } from '../../board/server.js';
import {
  PORT_OR_ANY_RULE,
  numberOption,
  optionLabel,
  parseCommandArgs,
  printBanner,
  printHelp,
  stringOption,
  usageError,
} from '../../setup/args.js';
import { untilStopSignal } from '../../setup/signals.js';

const CMD = 'demo';
const DEFAULT_PORT = 8080;

const HELP = `streamfence demo: run an invented plant through the engine and serve the operator board

Usage: streamfence demo [options]

Options:
  --port N            HTTP port, 1-65535 (default ${DEFAULT_PORT}, or a free one when that is taken;
                      0 picks a free one; env ${ENV.boardPort})
  --host ADDR         address to listen on (default 127.0.0.1; any other needs a token; env ${ENV.boardHost})
  --speed N           plant time runs N times faster than the clock, 1-3600 (default 60: one plant
                      hour per minute; env ${ENV.demoSpeed})
  --scenario NAME     ${Object.keys(SCENARIOS).join(', ')} (default ${DEFAULT_SCENARIO}; env ${ENV.scenario})
  --seed N            simulator seed, 0-${2 ** 31 - 1} (default 7; env ${ENV.seed})
  --preroll DURATION  plant history simulated at start, 6h-7d (default 8h; env ${ENV.demoPreroll})
  --board-token-file F  file holding the token operators' actions must carry (env
                      ${ENV.boardTokenFile}); or set it in ${ENV.boardToken}; at least ${MIN_BOARD_TOKEN_LENGTH} characters
${GROUP_HELP}
  -h, --help          this help

Serves: /  the board   /api/alerts   /api/events (live)   /metrics   /healthz
${NOTICE}
`;

/** demo's options. */
export const OPTIONS = {
  port: { type: 'string' },
  host: { type: 'string' },
  speed: { type: 'string' },
  scenario: { type: 'string' },
  seed: { type: 'string' },
  preroll: { type: 'string' },
  'board-token-file': { type: 'string' },
  /** Accepted only to be refused with the way to give the token: a flag value shows in `ps`. */
  'board-token': { type: 'string' },
} as const;

/** The environment variable of each option (a flag wins over its variable). */
export const OPTION_ENV: Record<Exclude<keyof typeof OPTIONS, 'board-token'>, string> = {
  port: ENV.boardPort,
  host: ENV.boardHost,
  speed: ENV.demoSpeed,
  scenario: ENV.scenario,
  seed: ENV.seed,
  preroll: ENV.demoPreroll,
  'board-token-file': ENV.boardTokenFile,
};

export async function main(argv: string[]): Promise<number> {
  const args = parseCommandArgs(CMD, argv, { ...OPTIONS, ...GROUP_ARG_OPTIONS }, false, OPTION_ENV);
  if (args.help) return printHelp(HELP);
  const portChosen = args.values.port !== undefined;
  const port = numberOption(args, 'port', CMD, { ...PORT_OR_ANY_RULE, fallback: DEFAULT_PORT });
  const host = stringOption(args, 'host', CMD) ?? '127.0.0.1';
  const speed = numberOption(args, 'speed', CMD, { min: 1, max: 3600, fallback: 60 });
  const seed = numberOption(args, 'seed', CMD, { whole: true, min: 0, max: 2 ** 31 - 1, fallback: 7 });
  const scenario = stringOption(args, 'scenario', CMD) ?? DEFAULT_SCENARIO;
  if (!(scenario in SCENARIOS))
    usageError(`unknown scenario "${scenario}"; choose one of ${Object.keys(SCENARIOS).join(', ')}`, CMD);
  const prerollRaw = stringOption(args, 'preroll', CMD) ?? '8h';
  const prerollMs = parseDuration(prerollRaw);
  if (prerollMs === null || prerollMs < 6 * 3_600_000 || prerollMs > 7 * 86_400_000) {
    usageError(
      `${optionLabel(args, 'preroll')} must be a duration from 6h to 7d (the baseline window is 6h), got "${prerollRaw}"`,
      CMD,
    );
  }
  if (args.values['board-token'] !== undefined) refuseTokenFlag(CMD);
  const token = boardTokenFor(host, readBoardToken(stringOption(args, 'board-token-file', CMD), process.env));

  const groupRule = readGroupRule(args, process.env, CMD);

  printBanner(CMD);
  const wallStart = Date.now();
  let feed: DemoFeed | null = null;
  const hub = new BoardHub({
    mode: 'demo',
    speed,
    groupRule,
    clock: { wall: () => Date.now(), plant: () => (feed ? feed.plantTimeAt(Date.now()) : wallStart) },
    flaggedNow: (sensor, id) => {
      const a = feed?.engine.get(sensor)?.life.active;
      return a && a.id === id ? a.flaggedReadings : null;
    },
  });
  const metrics = createDemoMetrics(hub);
  const demoLog = (line: string) => process.stderr.write(`streamfence demo: ${line}\n`);
  feed = new DemoFeed(hub, { scenario, seed, speed, prerollMs, wallStart }, metrics.engine);
  // The port first: one taken (or needing privileges) is refused before a second of pre-rolling.
  let board: Awaited<ReturnType<typeof startBoardServer>>;
  try {
    board = await startBoardServer({ hub, metrics, host, port, token, log: demoLog });
  } catch (err) {
    // The default port is often taken on a desktop; the demo then takes a free one and says so.
    // A port the user chose is never swapped silently.
    const cause = (err as { cause?: unknown } | null)?.cause;
    if (portChosen || (errorCode(err) !== 'EADDRINUSE' && errorCode(cause) !== 'EADDRINUSE')) throw err;
    board = await startBoardServer({ hub, metrics, host, port: 0, token, log: demoLog });
    process.stderr.write(
      `streamfence demo: port ${DEFAULT_PORT} is in use; serving on free port ${new URL(board.url).port} instead (choose one with --port)\n`,
    );
  }
  const t0 = performance.now();
  const pre = feed.advanceTo(wallStart);
  process.stderr.write(
    `streamfence demo: ${feed.sensorCount} sensors, ${(prerollMs / 3_600_000).toFixed(1)} h of history pre-rolled (${pre} readings in ${Math.round(performance.now() - t0)} ms); plant time now runs ${speed}x\n`,
  );
  process.stdout.write(`streamfence demo: board at ${board.url}/\n`);

  const pump = setInterval(() => feed.advanceTo(feed.plantTimeAt(Date.now())), 250);

  await untilStopSignal();
  clearInterval(pump);
  await board.close();
  process.stderr.write('streamfence demo: stopped\n');
  return 0;
}
