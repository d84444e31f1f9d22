/**
 * Small helpers shared by the CLI commands: option parsing that turns node:util parseArgs failures
 * into a typed ARGS_INVALID error, a uniform --help printer, and the banner long-running commands
 * print to stderr (carrying NOTICE, never re-worded).
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
