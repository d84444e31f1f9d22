/**
 * The secured local stack for integration tests: `stack-up.sh --secure` (idempotent: about a second
 * when it runs already) and its .stack/secure.env, as one environment per user. A test that cannot
 * get it fails; it is never skipped.
 */
import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

const REPO_ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
const NAMES = [
  'BROKERS',
  'KAFKA_TLS',
  'KAFKA_CA_FILE',
  'KAFKA_SASL_MECHANISM',
  'KAFKA_SASL_USERNAME',
  'KAFKA_SASL_PASSWORD_FILE',
  'REDIS_URL',
  'REDIS_USERNAME',
  'REDIS_PASSWORD_FILE',
  'REDIS_CA_FILE',
];

export interface SecureStack {
  /** STREAMFENCE_* variables for each user, ready to pass to a command's environment. */
  monitor: Record<string, string>;
  admin: Record<string, string>;
  operator: Record<string, string>;
  /** The monitor's variables with the read-only Redis user. */
  reader: Record<string, string>;
  raw: Record<string, string>;
}

let cached: SecureStack | undefined;

export function secureStack(): SecureStack {
  if (cached) return cached;
  const r = spawnSync('bash', [path.join(REPO_ROOT, 'deploy/local/stack-up.sh'), '--secure'], {
    cwd: REPO_ROOT,
    encoding: 'utf8',
    timeout: 180_000,
  });
  if (r.status !== 0)
    throw new Error(`could not bring up the secure stack (stack-up.sh --secure): ${r.stderr || r.error}`);
  const dir = process.env.STREAMFENCE_STACK_DIR ?? path.join(REPO_ROOT, '.stack');
  const raw: Record<string, string> = {};
  for (const line of readFileSync(path.join(dir, 'secure.env'), 'utf8').split('\n')) {
    const m = /^([A-Z0-9_]+)=(.*)$/.exec(line.trim());
    if (m) raw[m[1]] = m[2];
  }
  const user = (prefix: string) =>
    Object.fromEntries(NAMES.map((n) => [`STREAMFENCE_${n}`, raw[`${prefix}${n}`]]));
  cached = {
    raw,
    monitor: user('STREAMFENCE_'),
    admin: user('STREAMFENCE_ADMIN_'),
    operator: user('STREAMFENCE_OPERATOR_'),
    reader: {
      ...user('STREAMFENCE_'),
      STREAMFENCE_REDIS_USERNAME: raw.STREAMFENCE_READER_REDIS_USERNAME,
      STREAMFENCE_REDIS_PASSWORD_FILE: raw.STREAMFENCE_READER_REDIS_PASSWORD_FILE,
    },
  };
  return cached;
}
