/**
 * `streamfence demo`: the simulated plant, judged by the real engine, shown on the operator board.
 * Everything is in-process (no Kafka, no Redis), so it is the quickest way to see the product.
 */
import { parseDuration } from '../../../libs/config/duration.js';
import { NOTICE } from '../../../libs/schema/notice.js';
import { DEFAULT_SCENARIO, SCENARIOS } from '../../../libs/sim/plant.js';
import { boardTokenFor } from '../../board/auth.js';
import { DemoFeed } from '../../board/demo-feed.js';
import { BoardHub } from '../../board/hub.js';
import { createDemoMetrics } from '../../metrics/board-metrics.js';
import { startBoardServer } from '../../board/server.js';
import {
  numberOption,
  parseCommandArgs,
  printBanner,
  printHelp,
  stringOption,
  usageError,
} from '../../setup/args.js';
import { untilStopSignal } from '../../setup/signals.js';

const CMD = 'demo';

const HELP = `streamfence demo: run an invented plant through the engine and serve the operator board

Usage: streamfence demo [options]

Options:
  --port N            HTTP port (default 8080; 0 picks a free one)
  --host ADDR         address to listen on (default 127.0.0.1; any other needs --board-token)
  --speed N           plant time runs N times faster than the clock (default 60: one plant hour per minute)
  --scenario NAME     ${Object.keys(SCENARIOS).join(', ')} (default ${DEFAULT_SCENARIO})
  --seed N            simulator seed (default 7)
  --preroll DURATION  plant history simulated at start, e.g. 8h (default 8h; at least the 6h window)
  --board-token T     token operators' actions must carry (or STREAMFENCE_BOARD_TOKEN)
  -h, --help          this help

Serves: /  the board   /api/alerts   /api/events (live)   /metrics   /healthz
${NOTICE}
`;

export async function main(argv: string[]): Promise<number> {
  const args = parseCommandArgs(
    CMD,
    argv,
    {
      port: { type: 'string' },
      host: { type: 'string' },
      speed: { type: 'string' },
      scenario: { type: 'string' },
      seed: { type: 'string' },
      preroll: { type: 'string' },
      'board-token': { type: 'string' },
    },
    false,
  );
  if (args.help) return printHelp(HELP);
  const port = numberOption(args, 'port', CMD, { min: 0, max: 65535, fallback: 8080 });
  const host = stringOption(args, 'host', CMD) ?? '127.0.0.1';
  const speed = numberOption(args, 'speed', CMD, { min: 1, max: 3600, fallback: 60 });
  const seed = Math.trunc(numberOption(args, 'seed', CMD, { min: 0, max: 2 ** 31 - 1, fallback: 7 }));
  const scenario = stringOption(args, 'scenario', CMD) ?? DEFAULT_SCENARIO;
  if (!(scenario in SCENARIOS))
    usageError(`unknown scenario "${scenario}"; choose one of ${Object.keys(SCENARIOS).join(', ')}`, CMD);
  const prerollRaw = stringOption(args, 'preroll', CMD) ?? '8h';
  const prerollMs = parseDuration(prerollRaw);
  if (prerollMs === null || prerollMs < 6 * 3_600_000 || prerollMs > 7 * 86_400_000) {
    usageError(
      `--preroll must be a duration from 6h to 7d (the baseline window is 6h), got "${prerollRaw}"`,
      CMD,
    );
  }
  const token = boardTokenFor(
    host,
    stringOption(args, 'board-token', CMD) ?? process.env.STREAMFENCE_BOARD_TOKEN,
  );

  printBanner(CMD);
  const wallStart = Date.now();
  let feed: DemoFeed | null = null;
  const hub = new BoardHub({
    mode: 'demo',
    speed,
    clock: { wall: () => Date.now(), plant: () => (feed ? feed.plantTimeAt(Date.now()) : wallStart) },
    flaggedNow: (sensor, id) => {
      const a = feed?.engine.get(sensor)?.life.active;
      return a && a.id === id ? a.flaggedReadings : null;
    },
  });
  const metrics = createDemoMetrics(hub);
  feed = new DemoFeed(hub, { scenario, seed, speed, prerollMs, wallStart }, metrics.engine);
  const t0 = performance.now();
  const pre = feed.advanceTo(wallStart);
  process.stderr.write(
    `streamfence demo: ${feed.sensorCount} sensors, ${(prerollMs / 3_600_000).toFixed(1)} h of history pre-rolled (${pre} readings in ${Math.round(performance.now() - t0)} ms); plant time now runs ${speed}x\n`,
  );

  const board = await startBoardServer({ hub, metrics, host, port, token });
  process.stdout.write(`streamfence demo: board at ${board.url}/\n`);

  const pump = setInterval(() => feed.advanceTo(feed.plantTimeAt(Date.now())), 250);

  await untilStopSignal();
  clearInterval(pump);
  await board.close();
  process.stderr.write('streamfence demo: stopped\n');
  return 0;
}
