/** `streamfence --version` reads package.json, wherever the code runs from (source, dist/, a dependency). */
import { mkdirSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { packageVersion } from '../../../services/setup/version.js';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../..');

describe('packageVersion', () => {
  it("is the repository's package.json version when run from source", () => {
    const pkg = JSON.parse(readFileSync(path.join(ROOT, 'package.json'), 'utf8')) as { version: string };
    expect(packageVersion()).toBe(pkg.version);
  });

  it('walks up past other packages to the one named streamfence (dist/ inside a dependency)', () => {
    const base = mkdtempSync(path.join(tmpdir(), 'sf-version-'));
    const install = path.join(base, 'node_modules', 'streamfence');
    const cliDir = path.join(install, 'dist', 'services', 'cli');
    mkdirSync(cliDir, { recursive: true });
    writeFileSync(path.join(base, 'package.json'), JSON.stringify({ name: 'plant-app', version: '9.9.9' }));
    writeFileSync(
      path.join(install, 'package.json'),
      JSON.stringify({ name: 'streamfence', version: '2.3.4' }),
    );
    writeFileSync(path.join(install, 'dist', 'package.json'), JSON.stringify({ type: 'module' }));
    expect(packageVersion(cliDir)).toBe('2.3.4');
  });
});
