#!/usr/bin/env node
/**
 * streamfence command line entry. Each command lives in its own module and is loaded on demand,
 * so `--help` stays fast and a command's dependencies load only when it runs.
 */
import { NOTICE } from '../../libs/schema/notice.js';
import { isStreamfenceError } from '../../libs/errors/index.js';
import { packageVersion } from '../setup/version.js';

interface CommandEntry {
  summary: string;
  load: () => Promise<{ main: (argv: string[]) => Promise<number> }>;
}

// Each command module exports `main(argv): Promise<exitCode>`.
const COMMANDS: Record<string, CommandEntry> = {
  demo: {
    summary: 'run the simulated plant with the operator board, no Kafka or Redis needed',
    load: () => import('./commands/demo.js'),
  },
  replay: {
    summary: 'replay readings from a file (or a Kafka time range) through the engine',
    load: () => import('./commands/replay.js'),
  },
  run: {
    summary: 'the live monitor: Kafka readings in, alerts out, state in Redis, metrics',
    load: () => import('./commands/run.js'),
  },
  inspect: {
    summary: "print sensors' stored state and baselines from Redis",
    load: () => import('./commands/inspect.js'),
  },
  board: {
    summary: 'serve the operator board for the live system (follows the alert topic)',
    load: () => import('./commands/board.js'),
  },
  alerts: { summary: 'follow alert events in the terminal', load: () => import('./commands/alerts.js') },
  simulate: {
    summary: 'generate an invented plant data set with labelled faults',
    load: () => import('./commands/simulate.js'),
  },
  tune: {
    summary: 'score a grid of settings against labelled history and recommend one',
    load: () => import('./commands/tune.js'),
  },
  topics: {
    summary: 'create the input, alert, rejected and action topics, or check them',
    load: () => import('./commands/topics.js'),
  },
};

export function usage(): string {
  const lines = [
    'streamfence: streaming anomaly monitor for plant sensor feeds',
    `  ${NOTICE}`,
    '',
    'Usage: streamfence <command> [options]   (streamfence <command> --help for its options)',
    '',
    'Commands:',
    ...Object.entries(COMMANDS).map(([name, c]) => `  ${name.padEnd(10)} ${c.summary}`),
    '',
  ];
  return lines.join('\n');
}

async function main(argv: string[]): Promise<number> {
  const [cmd, ...rest] = argv;
  if (!cmd || cmd === '--help' || cmd === '-h' || cmd === 'help') {
    process.stdout.write(usage());
    return 0;
  }
  if (cmd === '--version') {
    process.stdout.write(`streamfence ${packageVersion()}\n`);
    return 0;
  }
  const entry = COMMANDS[cmd];
  if (!entry) {
    process.stderr.write(`streamfence: unknown command "${cmd}". Run "streamfence --help" for the list.\n`);
    return 2;
  }
  const mod = await entry.load();
  return mod.main(rest);
}

main(process.argv.slice(2)).then(
  (code) => {
    process.exitCode = code;
  },
  (err: unknown) => {
    if (isStreamfenceError(err)) {
      process.stderr.write(`streamfence: ${err.message} [${err.code}]\n`);
      process.exitCode = 2;
      // A command that cannot start ends now, even if a client library still holds a socket or a
      // timer (unref'd: a process that is already done exits at once).
      setTimeout(() => process.exit(2), 1_000).unref();
    } else {
      process.stderr.write(
        `streamfence: unexpected failure: ${err instanceof Error ? err.stack : String(err)}\n`,
      );
      process.exitCode = 1;
    }
  },
);
