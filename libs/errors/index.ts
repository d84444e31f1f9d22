/**
 * Typed errors with stable codes. The code is for programs and tests; the message tells the user
 * what to change. Codes are never renamed once released.
 */
/**
 * Every error code, in the order the README's error-code table lists them (test/unit/error-codes
 * .test.ts keeps the two in step). Add new codes at the end; never rename or remove one.
 */
export const ERROR_CODES = [
  'CONFIG_INVALID',
  'CONFIG_UNKNOWN_KEY',
  'CONFIG_CONTRADICTION',
  'ARGS_INVALID',
  'INPUT_UNREADABLE',
  'OUTPUT_UNWRITABLE',
  'STATE_CORRUPT',
  'STATE_VERSION',
  'SERVICE_UNAVAILABLE',
  'AUTH_FAILED',
  'TLS_FAILED',
  'NOT_AUTHORISED',
  'NOT_FOUND',
  'INPUT_EMPTY',
  'PORT_IN_USE',
  'TOPICS_DIFFER',
] as const;

/** A stable error code: what programs and tests match on (the message is for people). */
export type ErrorCode = (typeof ERROR_CODES)[number];

/**
 * An error the user can act on: `message` says what to change. The CLI prints
 * `streamfence: <message> [<code>]` and exits 2.
 *
 * @example throw new StreamfenceError('ARGS_INVALID', '--port must be a whole number from 0 to 65535, got "x"');
 */
export class StreamfenceError extends Error {
  /** The stable code, as listed in the README's error-code table. */
  readonly code: ErrorCode;
  constructor(code: ErrorCode, message: string, options?: { cause?: unknown }) {
    super(message, options);
    this.name = 'StreamfenceError';
    this.code = code;
  }
}

/** True for a StreamfenceError (any code). */
export function isStreamfenceError(error: unknown): error is StreamfenceError {
  return error instanceof StreamfenceError;
}
