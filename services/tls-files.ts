/** Reads PEM files named on the command line for Kafka and Redis TLS, with a message that says which. */
import { readFileSync } from 'node:fs';
import { StreamfenceError } from '../libs/errors/index.js';

export function readPem(service: 'Kafka' | 'Redis', file: string, what: string): Buffer {
  try {
    return readFileSync(file);
  } catch (e) {
    throw new StreamfenceError(
      'ARGS_INVALID',
      `cannot read the ${service} ${what} file ${file}: ${(e as Error).message}`,
    );
  }
}
