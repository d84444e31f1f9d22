/**
 * The streamfence version, read from the package.json of this installation: package.json is the
 * one place it is written (from source, from dist/, in the image and as an npm dependency alike).
 */
import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const PACKAGE_NAME = 'streamfence';

/** The `version` of the nearest package.json named streamfence at or above `fromDir`. */
export function packageVersion(fromDir = dirname(fileURLToPath(import.meta.url))): string {
  for (let dir = fromDir; ; dir = dirname(dir)) {
    let text: string | null = null;
    try {
      text = readFileSync(join(dir, 'package.json'), 'utf8');
    } catch (err) {
      if ((err as NodeJS.ErrnoException).code !== 'ENOENT') throw err;
    }
    if (text !== null) {
      const pkg = JSON.parse(text) as { name?: unknown; version?: unknown };
      if (pkg.name === PACKAGE_NAME && typeof pkg.version === 'string') return pkg.version;
    }
    if (dirname(dir) === dir) throw new Error(`no ${PACKAGE_NAME} package.json above ${fromDir}`);
  }
}
