/**
 * Who may change the board. On loopback only local users reach the server, so actions need no
 * token; on any other address a token is required both to start and for every POST. The token is a
 * secret: it comes from the environment or a file, never from a flag.
 */
import { timingSafeEqual } from 'node:crypto';
import { StreamfenceError } from '../../libs/errors/index.js';
import { ENV } from '../config/env.js';
import { readSecretFile } from '../connect/files.js';

export function isLoopbackHost(host: string): boolean {
  const h = host
    .trim()
    .toLowerCase()
    .replace(/^\[|\]$/g, '');
  return h === 'localhost' || h === '::1' || /^127(\.\d{1,3}){3}$/.test(h);
}

/** Shortest board token accepted: long enough that guessing it over HTTP is hopeless. */
export const MIN_BOARD_TOKEN_LENGTH = 16;

/**
 * The board token from STREAMFENCE_BOARD_TOKEN or from the file named by --board-token-file (or
 * STREAMFENCE_BOARD_TOKEN_FILE); never from a flag's value, which would show in `ps` and shell
 * history. Undefined when neither is set; both set is refused.
 */
export function readBoardToken(file: string | undefined, env: NodeJS.ProcessEnv): string | undefined {
  const direct = env[ENV.boardToken];
  if (file !== undefined && direct !== undefined && direct.trim() !== '')
    throw new StreamfenceError(
      'ARGS_INVALID',
      `both ${ENV.boardToken} and a board token file (${file}) are given; keep one`,
    );
  if (file !== undefined) return readSecretFile(file, 'board token').trim();
  return direct?.trim() ? direct.trim() : undefined;
}

/** The refusal of a token given as a flag value (it would show in `ps` and shell history). */
export function refuseTokenFlag(cmd: string): never {
  throw new StreamfenceError(
    'ARGS_INVALID',
    `the board token is a secret and is not taken from the command line: set ${ENV.boardToken} or pass --board-token-file FILE (see "streamfence ${cmd} --help")`,
  );
}

/** The token in force, or a typed error when a non-loopback board would start without one, or it is too short. */
export function boardTokenFor(host: string, token: string | undefined): string | null {
  const t = token?.trim() ? token.trim() : null;
  if (!isLoopbackHost(host) && t === null) {
    throw new StreamfenceError(
      'ARGS_INVALID',
      `the board would listen on ${host}, reachable from other machines, without a token: set ${ENV.boardToken} or pass --board-token-file FILE (at least ${MIN_BOARD_TOKEN_LENGTH} characters), or listen on 127.0.0.1`,
    );
  }
  if (t !== null && t.length < MIN_BOARD_TOKEN_LENGTH)
    throw new StreamfenceError(
      'ARGS_INVALID',
      `the board token has ${t.length} characters; use at least ${MIN_BOARD_TOKEN_LENGTH} (e.g. the output of "openssl rand -hex 16")`,
    );
  return t;
}

/** Whether a request's Authorization header carries the token (always true when no token is set). */
export function authorized(token: string | null, header: string | undefined): boolean {
  if (token === null) return true;
  const m = /^Bearer\s+(.+)$/i.exec(header ?? '');
  if (!m) return false;
  const a = Buffer.from(m[1].trim());
  const b = Buffer.from(token);
  return a.length === b.length && timingSafeEqual(a, b);
}
