/**
 * The one logger factory: pino JSON lines on stderr (stdout stays free for command output).
 * Secrets never reach a log line: known secret fields are redacted by path, and URLs are logged
 * through `safeUrl`, which keeps only host:port.
 */
import { pino, type Logger } from 'pino';

export type { Logger } from 'pino';

export const LOG_LEVELS = ['fatal', 'error', 'warn', 'info', 'debug', 'trace', 'silent'] as const;
export type LogLevel = (typeof LOG_LEVELS)[number];

const REDACT_PATHS = [
  'password',
  '*.password',
  'sasl.password',
  'options.password',
  'secret',
  '*.secret',
  'token',
  '*.token',
  '*.privateKey',
  'authorization',
  '*.authorization',
];

export function createLogger(name: string, level: LogLevel = 'info', destination = 2): Logger {
  return pino(
    {
      name,
      level,
      base: { pid: process.pid },
      timestamp: pino.stdTimeFunctions.isoTime,
      redact: { paths: REDACT_PATHS, censor: '[redacted]' },
      formatters: { level: (label) => ({ level: label }) },
    },
    pino.destination({ fd: destination, sync: true }),
  );
}

/** host:port of a URL or "host:port" string, never user, password, path or query. */
export function safeUrl(raw: string): string {
  try {
    const u = new URL(raw.includes('://') ? raw : `tcp://${raw}`);
    return u.port ? `${u.hostname}:${u.port}` : u.hostname;
  } catch {
    return '[unparseable address]';
  }
}
