/**
 * The README's error-code table lists exactly the codes in libs/errors (same order), and every code
 * thrown anywhere in libs/ or services/ is one of them (tsc checks the type; this also catches a
 * code written with a cast).
 */
import { readdirSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { ERROR_CODES } from '../../libs/errors/index.js';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');

function readmeCodes(): string[] {
  const readme = readFileSync(path.join(ROOT, 'README.md'), 'utf8');
  const start = readme.indexOf('\n## Error codes\n');
  expect(start).toBeGreaterThan(0);
  const section = readme.slice(start + 1, readme.indexOf('\n## ', start + 1));
  return [...section.matchAll(/^\| `([A-Z_]+)` \|/gm)].map((match) => match[1]);
}

function sourceFiles(dir: string): string[] {
  return readdirSync(path.join(ROOT, dir), { recursive: true, withFileTypes: true })
    .filter((entry) => entry.isFile() && entry.name.endsWith('.ts'))
    .map((entry) => path.join(entry.parentPath, entry.name));
}

describe('error codes', () => {
  it('are listed in the README table, all of them, in order', () => {
    expect(readmeCodes()).toEqual([...ERROR_CODES]);
  });

  it('thrown in the code are all known codes, and every known code is thrown somewhere', () => {
    const thrown = new Set<string>();
    for (const file of [...sourceFiles('libs'), ...sourceFiles('services')]) {
      const text = readFileSync(file, 'utf8');
      for (const match of text.matchAll(/StreamfenceError\(\s*'([A-Z_]+)'/g)) thrown.add(match[1]);
    }
    const known = new Set<string>(ERROR_CODES);
    expect([...thrown].filter((code) => !known.has(code))).toEqual([]);
    expect(ERROR_CODES.filter((code) => !thrown.has(code))).toEqual([]);
  });
});
