/**
 * Every option of every command has an environment variable (declared in services/config/env.ts),
 * and the README's command reference (or run's table) names each option beside its variable.
 * Actions (--help, simulate --list) and options that exist only to be refused (simulate --out,
 * --board-token) have none.
 */
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { ENV_NAMES } from '../../../services/config/env.js';
import { RUN_OPTIONS } from '../../../services/cli/run-options.js';
import { KAFKA_OPTIONS, REDIS_OPTIONS } from '../../../services/connect/index.js';
import * as alerts from '../../../services/cli/commands/alerts.js';
import * as board from '../../../services/cli/commands/board.js';
import * as demo from '../../../services/cli/commands/demo.js';
import * as inspect from '../../../services/cli/commands/inspect.js';
import * as replay from '../../../services/cli/commands/replay.js';
import * as simulate from '../../../services/cli/commands/simulate.js';
import * as topics from '../../../services/cli/commands/topics.js';
import * as tune from '../../../services/cli/commands/tune.js';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../..');
const README = readFileSync(path.join(ROOT, 'README.md'), 'utf8');

interface CommandModule {
  OPTIONS: Record<string, unknown>;
  OPTION_ENV: Record<string, string>;
}
const COMMANDS: Record<string, CommandModule> = {
  alerts,
  board,
  demo,
  inspect,
  replay,
  simulate,
  topics,
  tune,
};
const WITHOUT_ENV: Record<string, string[]> = {
  simulate: ['list', 'out'],
  board: ['board-token'],
  demo: ['board-token'],
};

/** The option/variable pairs of every command, run included (its connection options are checked elsewhere). */
function pairs(): [string, string, string][] {
  const out: [string, string, string][] = [];
  for (const [cmd, m] of Object.entries(COMMANDS))
    for (const [option, env] of Object.entries(m.OPTION_ENV)) out.push([cmd, option, env]);
  for (const [option, spec] of Object.entries(RUN_OPTIONS)) {
    if (option in KAFKA_OPTIONS || option in REDIS_OPTIONS) continue;
    out.push(['run', option, spec.env ?? '']);
  }
  return out;
}

describe('options and their environment variables', () => {
  it.each(Object.entries(COMMANDS))('every %s option has a declared variable', (cmd, m) => {
    const missing = Object.keys(m.OPTIONS).filter(
      (o) => !(o in m.OPTION_ENV) && !(WITHOUT_ENV[cmd] ?? []).includes(o),
    );
    expect(missing).toEqual([]);
    for (const env of Object.values(m.OPTION_ENV)) expect(ENV_NAMES).toContain(env);
  });

  it('run has a variable for every option', () => {
    for (const [option, spec] of Object.entries(RUN_OPTIONS)) expect(spec.env, option).toBeDefined();
  });

  it('one variable means one thing: a variable shared by commands is the same option', () => {
    const optionOf = new Map<string, string>();
    for (const [cmd, option, env] of pairs()) {
      const seen = optionOf.get(env);
      expect(seen === undefined || seen === option, `${env}: --${seen} and --${option} (${cmd})`).toBe(true);
      optionOf.set(env, option);
    }
  });

  it('the README names each option beside its variable', () => {
    const lines = README.split('\n').filter((l) => l.startsWith('|'));
    const absent = pairs().filter(
      ([, option, env]) =>
        !lines.some((l) => new RegExp(`\`--${option}[\` ]`).test(l) && l.includes(`\`${env}\``)),
    );
    expect(absent.map(([cmd, option, env]) => `${cmd} --${option} ${env}`)).toEqual([]);
  });
});
