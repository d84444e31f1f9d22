/**
 * Typed errors with stable codes. The code is for programs and tests; the message tells the user
 * what to change. Codes are never renamed once released.
 */
export type ErrorCode =
  | 'CONFIG_INVALID'
  | 'CONFIG_UNKNOWN_KEY'
  | 'CONFIG_CONTRADICTION'
  | 'ARGS_INVALID'
  | 'INPUT_UNREADABLE'
  | 'INPUT_EMPTY'
  | 'OUTPUT_UNWRITABLE'
  | 'STATE_CORRUPT'
  | 'STATE_VERSION'
  | 'SERVICE_UNAVAILABLE'
  | 'AUTH_FAILED'
  | 'TLS_FAILED'
  | 'NOT_AUTHORISED'
  | 'NOT_FOUND';

export class StreamfenceError extends Error {
  readonly code: ErrorCode;
  constructor(code: ErrorCode, message: string, options?: { cause?: unknown }) {
    super(message, options);
    this.name = 'StreamfenceError';
    this.code = code;
  }
}

export function isStreamfenceError(e: unknown): e is StreamfenceError {
  return e instanceof StreamfenceError;
}
