/**
 * Loading the engine config file, the same way for every command: built-in defaults when no file
 * is named, a one-line CONFIG_INVALID error naming the file when it cannot be read, and the
 * validation of libs/config (unknown keys and contradictions refused) for its contents.
 */
import { readFileSync } from 'node:fs';
import { defaultConfig, parseConfigText, type EngineConfig } from '../../libs/config/config.js';
import { StreamfenceError } from '../../libs/errors/index.js';
import { fileProblem } from '../fs-errors.js';

/**
 * The engine config in the file at `path` (YAML or JSON), or the built-in defaults when `path` is
 * undefined or null. `hint` names where the path came from, for the error message.
 */
export function loadEngineConfig(path: string | null | undefined, hint = '--config'): EngineConfig {
  if (path === undefined || path === null) return defaultConfig();
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (err) {
    const why = fileProblem(err);
    throw new StreamfenceError(
      'CONFIG_INVALID',
      `cannot read the config file "${path}": ${why}; check ${hint}`,
      {
        cause: err,
      },
    );
  }
  // An empty file is almost always a mistake (a wrong path, a failed copy); the built-in defaults
  // are what leaving --config out gives, so an empty file is refused rather than read as them.
  if (text.replace(/#.*$/gm, '').trim() === '')
    throw new StreamfenceError(
      'CONFIG_INVALID',
      `the config file "${path}" is empty (or only comments): write settings under defaults: / sensors:, or leave ${hint} out for the built-in defaults`,
    );
  return parseConfigText(text, path);
}
