#!/usr/bin/env node
/**
 * streamfence command line entry. Each command lives in its own module and is loaded on demand,
 * so `--help` stays fast and a command's dependencies load only when it runs.
 */
import { NOTICE } from '../../libs/schema/notice.js';
import { isStreamfenceError } from '../../libs/errors/index.js';

interface CommandEntry {
  summary: string;
  load: () => Promise<{ main: (argv: string[]) => Promise<number> }>;
}

const COMMANDS: Record<string, CommandEntry> = {};

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
    process.stdout.write('streamfence 0.1.0\n');
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
    } else {
      process.stderr.write(
        `streamfence: unexpected failure: ${err instanceof Error ? err.stack : String(err)}\n`,
      );
      process.exitCode = 1;
    }
  },
);
