/**
 * The monitor's Kafka offset commits, off the partition lock. A commit is a hint only (the Redis
 * offset decides where reading resumes; the commit lets a fresh group start near the right place
 * and tells a later monitor that the group had made progress), so no checkpoint waits for it.
 *
 * Why: with the group coordinator's broker dead, kafkajs retries each commit (about 2 s with the
 * consumer's retry settings) before it fails; awaited inside every checkpoint, under the lock that
 * batches also take, that held the monitor to one batch per commit for as long as the coordinator
 * was gone (measured: 20-35 s with `npm run bench -- failover`, README "Failover pause").
 *
 * At most one commit request is in flight; offsets noted meanwhile are merged (the newest per
 * partition wins) and sent together when it ends. Offsets only ever come from written
 * checkpoints, so a commit never gets ahead of Redis.
 */

/** One partition's offset to commit (the next offset to read, as Kafka commits mean it). */
export interface CommitOffset {
  partition: number;
  offset: string;
}

export class CommitHints {
  private readonly pending = new Map<number, string>();
  private inFlight: Promise<void> | null = null;

  /**
   * @param commit sends one commit request; its failure is reported to `onFailure` and not
   *   retried here (the next checkpoint notes a newer offset anyway).
   */
  constructor(
    private readonly commit: (offsets: CommitOffset[]) => Promise<void>,
    private readonly onFailure: (err: unknown) => void,
  ) {}

  /** Commit `offset` for `partition` soon, after the request in flight if there is one. */
  note(partition: number, offset: string): void {
    this.pending.set(partition, offset);
    if (!this.inFlight) this.inFlight = this.drain();
  }

  /** Drop a partition's offset not yet sent (the partition was handed over). */
  forget(partition: number): void {
    this.pending.delete(partition);
  }

  /** Resolves when every noted offset has been sent (or failed); for a graceful stop. */
  async settled(): Promise<void> {
    while (this.inFlight) await this.inFlight;
  }

  private async drain(): Promise<void> {
    try {
      while (this.pending.size > 0) {
        const offsets = [...this.pending].map(([partition, offset]) => ({ partition, offset }));
        this.pending.clear();
        await this.commit(offsets).catch(this.onFailure);
      }
    } finally {
      this.inFlight = null;
    }
  }
}
