/**
 * Why an HTTP port could not be opened, as one line that names the port, the address and the
 * option to change (the metrics port of `run`, the board port of `board` and `demo`). Node's own
 * text (`listen EADDRINUSE: address already in use :::6379`) never reaches the user.
 */
import { StreamfenceError } from '../../libs/errors/index.js';
import { errorCode } from '../fs-errors.js';

/** What was being opened: the port and address tried, and the option that chooses the port. */
export interface ListenTarget {
  port: number;
  host: string;
  /** e.g. "--metrics-port" or "--port" */
  option: string;
}

/**
 * The typed error for a failed listen, keeping the original as `cause` (its `code`, e.g.
 * EADDRINUSE, stays readable for callers that try another port). Anything not about the port or
 * address is returned unchanged.
 */
export function listenFailure(err: unknown, target: ListenTarget): unknown {
  const { port, host, option } = target;
  switch (errorCode(err)) {
    case 'EADDRINUSE':
      return new StreamfenceError(
        'PORT_IN_USE',
        `port ${port} on ${host} is in use; choose another with ${option}`,
        { cause: err },
      );
    case 'EACCES':
      return new StreamfenceError(
        'PORT_IN_USE',
        `port ${port} on ${host} needs privileges this process does not have; choose one above 1023 with ${option}`,
        { cause: err },
      );
    case 'EADDRNOTAVAIL':
      return new StreamfenceError(
        'ARGS_INVALID',
        `${host} is not an address of this machine, so port ${port} cannot be opened there; choose another host`,
        { cause: err },
      );
    default:
      return err;
  }
}
