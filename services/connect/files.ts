/**
 * Reads the files the connection options name: PEM certificates and keys, and password files. The
 * error says which dependency and which file, and never echoes the file's content.
 */
import { readFileSync } from 'node:fs';
import { StreamfenceError } from '../../libs/errors/index.js';
import { fileProblem } from '../fs-errors.js';

/** A PEM file named by a --kafka-*-file or --redis-*-file option. */
export function readPem(service: 'Kafka' | 'Redis', file: string, what: string): Buffer {
  try {
    return readFileSync(file);
  } catch (e) {
    throw new StreamfenceError(
      'ARGS_INVALID',
      `cannot read the ${service} ${what} file ${file}: ${fileProblem(e)}`,
    );
  }
}

/** A password file: its content without one trailing newline (editors and `echo` add one). */
export function readSecretFile(file: string, what: string): string {
  let text: string;
  try {
    text = readFileSync(file, 'utf8');
  } catch (e) {
    throw new StreamfenceError('ARGS_INVALID', `cannot read the ${what} file ${file}: ${fileProblem(e)}`);
  }
  const secret = text.replace(/\r?\n$/, '');
  if (secret.length === 0) throw new StreamfenceError('ARGS_INVALID', `the ${what} file ${file} is empty`);
  return secret;
}
