/**
 * Command-line parsing shared by every command (the setup layer, with config-file.ts and
 * signals.ts): node:util parseArgs failures become a typed ARGS_INVALID error naming the command,
 * a uniform --help printer, one rule for numeric options, and the banner long-running commands
 * print to stderr (carrying NOTICE, never re-worded). Kafka/Redis connection options are
 * services/connect/'s, not repeated here.
 */
import { parseArgs, type ParseArgsConfig } from 'node:util';
import { NOTICE } from '../../libs/schema/notice.js';
import { StreamfenceError } from '../../libs/errors/index.js';
import { parseDuration } from '../../libs/config/duration.js';
import { parseTimestamp } from '../../libs/engine/reading.js';

/** A writable text sink (process.stderr, process.stdout, or a test buffer). */
export interface TextSink {
  write(chunk: string): unknown;
}

/** The banner line: "streamfence <cmd> — <NOTICE>". Written to stderr so stdout stays machine-readable. */
export function bannerText(cmd: string): string {
  return `streamfence ${cmd} — ${NOTICE}\n`;
}

export function printBanner(cmd: string, stream: TextSink = process.stderr): void {
  stream.write(bannerText(cmd));
}

/** Throw the typed error for unusable command-line arguments; the message says what to change. */
export function usageError(message: string, cmd?: string): never {
  const hint = cmd ? ` (see "streamfence ${cmd} --help")` : '';
  throw new StreamfenceError('ARGS_INVALID', `${message}${hint}`);
}

export type OptionSpec = NonNullable<ParseArgsConfig['options']>;

export interface ParsedArgs {
  values: Record<string, string | boolean | (string | boolean)[] | undefined>;
  positionals: string[];
  help: boolean;
  /** Options whose value came from their environment variable (name -> variable), not a flag. */
  fromEnv: Record<string, string>;
}

/**
 * A string option followed by a negative number (`--budget -1`) is read as that option's value:
 * parseArgs would otherwise call it "ambiguous", and the range check below gives the clearer
 * message ("--budget must be a positive number").
 */
function joinNegativeValues(argv: string[], options: OptionSpec): string[] {
  const out: string[] = [];
  for (let i = 0; i < argv.length; i++) {
    const arg = argv[i];
    if (arg === '--') {
      out.push(...argv.slice(i));
      break;
    }
    const next = argv[i + 1];
    const name = arg.startsWith('--') && !arg.includes('=') ? arg.slice(2) : undefined;
    if (
      name !== undefined &&
      options[name]?.type === 'string' &&
      next !== undefined &&
      /^-[\d.]/.test(next)
    ) {
      out.push(`${arg}=${next}`);
      i++;
    } else out.push(arg);
  }
  return out;
}

/** A switch's environment value: true/false words, anything else refused. */
function envSwitch(variable: string, raw: string, cmd: string): boolean {
  if (/^(1|true|yes|on)$/i.test(raw)) return true;
  if (/^(0|false|no|off)$/i.test(raw)) return false;
  return usageError(`${variable} must be true or false, got "${raw}"`, cmd);
}

/**
 * parseArgs in strict mode with `--help`/`-h` added. Unknown options, missing option values and the
 * like become ARGS_INVALID errors naming the command, instead of node's TypeError. `envOf` names
 * the environment variable of each option (services/config/env.ts): an option not given as a flag
 * takes its variable's value when that is set and not empty (the flag wins).
 */
export function parseCommandArgs(
  cmd: string,
  argv: string[],
  options: OptionSpec,
  allowPositionals = true,
  envOf: Record<string, string> = {},
  env: NodeJS.ProcessEnv = process.env,
): ParsedArgs {
  const withHelp: OptionSpec = { ...options, help: { type: 'boolean', short: 'h' } };
  let parsed: { values: ParsedArgs['values']; positionals: string[] };
  try {
    parsed = parseArgs({
      args: joinNegativeValues(argv, withHelp),
      options: withHelp,
      allowPositionals,
      strict: true,
    }) as typeof parsed;
  } catch (err) {
    const msg =
      err instanceof Error ? err.message.replace(/\. To specify a positional argument.*$/s, '') : String(err);
    return usageError(msg, cmd);
  }
  const values = { ...parsed.values };
  const fromEnv: Record<string, string> = {};
  for (const [name, variable] of Object.entries(envOf)) {
    const raw = env[variable];
    if (values[name] !== undefined || raw === undefined || raw === '') continue;
    values[name] = options[name]?.type === 'boolean' ? envSwitch(variable, raw, cmd) : raw;
    fromEnv[name] = variable;
  }
  return { values, positionals: parsed.positionals, help: values.help === true, fromEnv };
}

/** How to name an option in a message: its flag, or its variable when the value came from there. */
export function optionLabel(parsed: ParsedArgs | undefined, name: string): string {
  const variable = parsed?.fromEnv[name];
  return variable === undefined ? `--${name}` : variable;
}

/** Write a command's help text to stdout (help is requested output, so stdout) and return exit code 0. */
export function printHelp(text: string, stream: TextSink = process.stdout): number {
  stream.write(text.endsWith('\n') ? text : `${text}\n`);
  return 0;
}

/** Read a string option, or undefined; rejects a boolean or repeated use with ARGS_INVALID. */
export function stringOption(parsed: ParsedArgs, name: string, cmd: string): string | undefined {
  const v = parsed.values[name];
  if (v === undefined) return undefined;
  if (typeof v !== 'string') usageError(`${optionLabel(parsed, name)} takes one value`, cmd);
  if (v.length === 0) usageError(`${optionLabel(parsed, name)} needs a non-empty value`, cmd);
  return v;
}

/**
 * What a numeric option accepts. `min`/`max` are inclusive, `above` is an exclusive lower bound
 * (`above: 0` reads "positive"); `what` names the unit in the message ("alerts per hour").
 */
export interface NumberRule {
  whole?: boolean;
  min?: number;
  max?: number;
  above?: number;
  what?: string;
  /** The whole description when the generic one reads badly ("a TCP port from 1 to 65535"). */
  text?: string;
}

function describeRule(rule: NumberRule): string {
  if (rule.text !== undefined) return rule.text;
  const kind = rule.whole === true ? 'whole number' : 'number';
  const unit = rule.what === undefined ? '' : ` of ${rule.what}`;
  if (rule.min !== undefined && rule.max !== undefined)
    return `a ${kind}${unit} from ${rule.min} to ${rule.max}`;
  if (rule.above === 0) return `a positive ${kind}${unit}`;
  if (rule.above !== undefined) return `a ${kind}${unit} above ${rule.above}`;
  if (rule.min !== undefined) return `a ${kind}${unit} >= ${rule.min}`;
  return `a ${kind}${unit}`;
}

/**
 * The number in `raw` if it meets `rule`, else ARGS_INVALID saying what --`name` accepts. `name`
 * may already be a label (`--budget`, `STREAMFENCE_ALERT_BUDGET`); a bare name gets the `--`.
 */
export function parseNumber(raw: string, name: string, rule: NumberRule, cmd?: string): number {
  const label = /^(--|[A-Z])/.test(name) ? name : `--${name}`;
  const text = raw.trim();
  const looksRight = rule.whole === true ? /^-?\d+$/.test(text) : text !== '';
  const value = looksRight ? Number(text) : NaN;
  const ok =
    Number.isFinite(value) &&
    (rule.min === undefined || value >= rule.min) &&
    (rule.max === undefined || value <= rule.max) &&
    (rule.above === undefined || value > rule.above);
  if (!ok) usageError(`${label} must be ${describeRule(rule)}, got "${raw}"`, cmd);
  return value;
}

/** A numeric option: `fallback` when absent, else its value checked against `rule`. */
export function numberOption(
  parsed: ParsedArgs,
  name: string,
  cmd: string,
  rule: NumberRule & { fallback: number },
): number {
  const raw = stringOption(parsed, name, cmd);
  return raw === undefined ? rule.fallback : parseNumber(raw, optionLabel(parsed, name), rule, cmd);
}

/** TCP ports: 1-65535, or 0 where the command picks any free port (and says which). */
export const PORT_RULE: NumberRule = { whole: true, min: 1, max: 65535, text: 'a TCP port from 1 to 65535' };
export const PORT_OR_ANY_RULE: NumberRule = {
  whole: true,
  min: 0,
  max: 65535,
  text: 'a TCP port from 1 to 65535, or 0 for any free port',
};

/**
 * An absolute time: ISO-8601 with a zone or epoch milliseconds, exactly as readings are read (a
 * time without a zone would mean different instants on different machines).
 */
export function parseTimeValue(raw: string, label: string, cmd: string): number {
  const t = parseTimestamp(raw);
  if (!t.ok)
    usageError(
      `${label} "${raw}" is not a time with a zone: write ISO-8601 with Z or an offset (2026-03-02T06:00:00Z, 2026-03-02T07:00:00+01:00) or epoch milliseconds`,
      cmd,
    );
  return (t as { ts: number }).ts;
}

/** A start time given as an absolute time (see parseTimeValue) or a duration back from `now` (90m, 24h). */
export function parseTimeOrAgo(raw: string, label: string, now: number, cmd: string): number {
  const text = raw.trim();
  const ms = parseDuration(text);
  if (ms !== null && /[a-z]$/i.test(text)) return now - ms;
  const t = parseTimestamp(text);
  if (!t.ok)
    usageError(
      `${label} "${raw}" must be a time with a zone (2026-03-02T06:00:00Z, or epoch milliseconds) or a duration back from now (90m, 24h)`,
      cmd,
    );
  return (t as { ts: number }).ts;
}

/** Say on stderr that an option given has no effect in this context (one line; it is not an error). */
export function warnNoEffect(
  cmd: string,
  parsed: ParsedArgs,
  names: string[],
  why: string,
  stream: TextSink = process.stderr,
): void {
  const given = names.filter((n) => parsed.values[n] !== undefined);
  if (given.length === 0) return;
  const list = given.map((n) => optionLabel(parsed, n)).join(', ');
  stream.write(
    `streamfence ${cmd}: warning: ${list} ${given.length === 1 ? 'has' : 'have'} no effect ${why}\n`,
  );
}

/** The help lines naming each option's environment variable (a flag wins over its variable). */
export function envHelp(envOf: Record<string, string>): string {
  const items = Object.entries(envOf).map(([name, variable]) => `--${name} ${variable}`);
  const lines: string[] = [];
  let line = '';
  for (const item of items) {
    const next = line === '' ? item : `${line}, ${item}`;
    if (next.length > 96 && line !== '') {
      lines.push(`${line},`);
      line = item;
    } else line = next;
  }
  if (line !== '') lines.push(line);
  return `\nEnvironment (a flag wins over its variable):\n${lines.map((l) => `  ${l}`).join('\n')}\n`;
}
