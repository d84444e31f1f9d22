/**
 * A buffered line writer over a file stream: lines collect in memory and go out as one write per
 * ~64 KiB, and a write that the stream refuses (backpressure) is awaited before more is queued.
 */
import { createWriteStream, type WriteStream } from 'node:fs';
import { once } from 'node:events';
import { StreamfenceError } from '../../libs/errors/index.js';
import { fileProblem } from '../fs-errors.js';

// 64 KiB, not more: on Node 20 a joined string past about 128 KiB is allocated outside V8's
// ordinary pages, and joining and writing 256 KiB at a time measured 2 to 6 times slower.
const FLUSH_AT = 64 * 1024;

export class LineWriter {
  private readonly stream: WriteStream;
  private parts: string[] = [];
  private size = 0;
  private failure: Error | null = null;
  lines = 0;

  constructor(readonly path: string) {
    this.stream = createWriteStream(path, { encoding: 'utf8' });
    this.stream.on('error', (e) => {
      this.failure = e;
    });
  }

  /** Queue one line (a newline is added). Call `maybeFlush` after a batch. */
  push(line: string): void {
    this.parts.push(line, '\n');
    this.size += line.length + 1;
    this.lines++;
  }

  /** Flush when enough is buffered; waits for 'drain' when the stream asks for it. */
  async maybeFlush(): Promise<void> {
    if (this.size >= FLUSH_AT) await this.flush();
  }

  async flush(): Promise<void> {
    this.check();
    if (this.parts.length === 0) return;
    const text = this.parts.join('');
    this.parts = [];
    this.size = 0;
    if (!this.stream.write(text)) await once(this.stream, 'drain');
    this.check();
  }

  async close(): Promise<void> {
    await this.flush();
    this.stream.end();
    await once(this.stream, 'finish');
    this.check();
  }

  /** Close without flushing (after a failure elsewhere). */
  destroy(): void {
    this.stream.destroy();
  }

  private check(): void {
    if (this.failure !== null) {
      throw new StreamfenceError(
        'OUTPUT_UNWRITABLE',
        `cannot write "${this.path}": ${fileProblem(this.failure)}; choose another folder with --out`,
        {
          cause: this.failure,
        },
      );
    }
  }
}
