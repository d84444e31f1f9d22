/**
 * Benchmark runner (`npm run bench`): runs every test/bench/*.bench.js compiled next to this file,
 * one after another (never in parallel: they would measure each other), and prints each one's
 * figures as JSON. Results also go to test-artifacts/bench.json. Run `npm run bench -- engine`
 * to run only the benches whose file name contains "engine" (a filter that is one bench's whole
 * name runs that one alone). A bench exporting `onlyWhenNamed` (failover, redis-failover: they
 * start servers of their own) runs only when a filter names it.
 */
import { existsSync, mkdirSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const here = dirname(fileURLToPath(import.meta.url));
const repo = resolve(here, '../../..');

/** Make the local stack's addresses visible to benches that need Kafka or Redis. */
function loadStackEnv(): void {
  const file = join(repo, '.stack', 'env');
  if (!existsSync(file)) return;
  for (const line of readFileSync(file, 'utf8').split('\n')) {
    const m = /^([A-Z0-9_]+)=(.*)$/.exec(line.trim());
    if (m && process.env[m[1]] === undefined) process.env[m[1]] = m[2].replace(/^"|"$/g, '');
  }
}

async function main(): Promise<void> {
  loadStackEnv();
  const filter = process.argv[2];
  const all = readdirSync(here).filter((f) => f.endsWith('.bench.js'));
  // A filter that is a bench's whole name runs that bench alone ("failover" is also part of
  // "redis-failover"); otherwise every bench whose name contains it.
  const exact = all.filter((f) => f === `${filter}.bench.js`);
  const files = (exact.length > 0 ? exact : all.filter((f) => !filter || f.includes(filter))).sort();
  const results: Record<string, unknown> = {
    node: process.version,
    cpus: (await import('node:os')).cpus().length,
  };
  for (const f of files) {
    const name = f.replace(/\.bench\.js$/, '');
    process.stderr.write(`bench ${name} ...\n`);
    const mod = (await import(pathToFileURL(join(here, f)).href)) as {
      run: () => Promise<Record<string, unknown>>;
      /** A bench that starts servers of its own and takes minutes runs only when named. */
      onlyWhenNamed?: boolean;
    };
    if (mod.onlyWhenNamed && !filter) {
      process.stderr.write(`bench ${name} skipped (only when named: npm run bench -- ${name})\n`);
      continue;
    }
    const started = Date.now();
    results[name] = await mod.run();
    process.stderr.write(`bench ${name} done in ${((Date.now() - started) / 1000).toFixed(1)} s\n`);
    process.stdout.write(`${JSON.stringify({ [name]: results[name] }, null, 2)}\n`);
  }
  mkdirSync(join(repo, 'test-artifacts'), { recursive: true });
  writeFileSync(join(repo, 'test-artifacts', 'bench.json'), `${JSON.stringify(results, null, 2)}\n`);
}

main().then(
  () => process.exit(0),
  (err: unknown) => {
    process.stderr.write(`bench failed: ${err instanceof Error ? err.stack : String(err)}\n`);
    process.exit(1);
  },
);
