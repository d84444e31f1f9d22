/** Starts `streamfence demo` (or another command that serves a board) as a child process on a free port and returns its URL. */
import { spawn, type ChildProcess } from 'node:child_process';
import { once } from 'node:events';

export interface DemoProcess {
  url: string;
  child: ChildProcess;
  stderr: () => string;
  stop(): Promise<void>;
}

export async function startDemo(args: string[], command: 'demo' | 'board' = 'demo'): Promise<DemoProcess> {
  const child = spawn(
    process.execPath,
    ['--import', 'tsx', 'services/cli/main.ts', command, '--port', '0', ...args],
    {
      cwd: process.cwd(),
      stdio: ['ignore', 'pipe', 'pipe'],
    },
  );
  let out = '';
  let err = '';
  child.stderr!.setEncoding('utf8').on('data', (c: string) => (err += c));
  const url = await new Promise<string>((resolve, reject) => {
    const timer = setTimeout(
      () => reject(new Error(`${command} did not start in 60 s; stderr: ${err}`)),
      60_000,
    );
    child.stdout!.setEncoding('utf8').on('data', (c: string) => {
      out += c;
      const m = /board at (http:\/\/\S+?)\/?\s/.exec(out);
      if (m) {
        clearTimeout(timer);
        resolve(m[1]);
      }
    });
    child.once('exit', (code) => {
      clearTimeout(timer);
      reject(new Error(`${command} exited with ${code}; stderr: ${err}`));
    });
  });
  return {
    url,
    child,
    stderr: () => err,
    async stop() {
      if (child.exitCode !== null) return;
      child.kill('SIGINT');
      await once(child, 'exit');
    },
  };
}
