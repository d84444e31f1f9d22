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
}

/**
 * parseArgs in strict mode with `--help`/`-h` added. Unknown options, missing option values and the
 * like become ARGS_INVALID errors naming the command, instead of node's TypeError.
 */
export function parseCommandArgs(
  cmd: string,
  argv: string[],
  options: OptionSpec,
  allowPositionals = true,
): ParsedArgs {
  const withHelp: OptionSpec = { ...options, help: { type: 'boolean', short: 'h' } };
  try {
    const { values, positionals } = parseArgs({
      args: argv,
      options: withHelp,
      allowPositionals,
      strict: true,
    });
    const v = values as ParsedArgs['values'];
    return { values: v, positionals, help: v.help === true };
  } catch (err) {
    const msg =
      err instanceof Error ? err.message.replace(/\. To specify a positional argument.*$/s, '') : String(err);
    return usageError(msg, cmd);
  }
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
  if (typeof v !== 'string') usageError(`--${name} takes one value`, cmd);
  if (v.length === 0) usageError(`--${name} needs a non-empty value`, cmd);
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
}

function describeRule(rule: NumberRule): string {
  const kind = rule.whole === true ? 'whole number' : 'number';
  const unit = rule.what === undefined ? '' : ` of ${rule.what}`;
  if (rule.min !== undefined && rule.max !== undefined)
    return `a ${kind}${unit} from ${rule.min} to ${rule.max}`;
  if (rule.above === 0) return `a positive ${kind}${unit}`;
  if (rule.above !== undefined) return `a ${kind}${unit} above ${rule.above}`;
  if (rule.min !== undefined) return `a ${kind}${unit} >= ${rule.min}`;
  return `a ${kind}${unit}`;
}

/** The number in `raw` if it meets `rule`, else ARGS_INVALID saying what --`name` accepts. */
export function parseNumber(raw: string, name: string, rule: NumberRule, cmd?: string): number {
  const text = raw.trim();
  const looksRight = rule.whole === true ? /^-?\d+$/.test(text) : text !== '';
  const value = looksRight ? Number(text) : NaN;
  const ok =
    Number.isFinite(value) &&
    (rule.min === undefined || value >= rule.min) &&
    (rule.max === undefined || value <= rule.max) &&
    (rule.above === undefined || value > rule.above);
  if (!ok) usageError(`--${name} must be ${describeRule(rule)}, got "${raw}"`, cmd);
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
  return raw === undefined ? rule.fallback : parseNumber(raw, name, rule, cmd);
}
