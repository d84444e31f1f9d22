/**
 * Who may change the board. On loopback only local users reach the server, so actions need no
 * token; on any other address a token is required both to start and for every POST.
 */
import { timingSafeEqual } from 'node:crypto';
import { StreamfenceError } from '../../libs/errors/index.js';

export function isLoopbackHost(host: string): boolean {
  const h = host
    .trim()
    .toLowerCase()
    .replace(/^\[|\]$/g, '');
  return h === 'localhost' || h === '::1' || /^127(\.\d{1,3}){3}$/.test(h);
}

/** The token in force, or a typed error when a non-loopback board would start without one. */
export function boardTokenFor(host: string, token: string | undefined): string | null {
  const t = token?.trim() ? token.trim() : null;
  if (!isLoopbackHost(host) && t === null) {
    throw new StreamfenceError(
      'ARGS_INVALID',
      `the board would listen on ${host}, reachable from other machines, without a token: pass --board-token <secret> or set STREAMFENCE_BOARD_TOKEN, or listen on 127.0.0.1`,
    );
  }
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
