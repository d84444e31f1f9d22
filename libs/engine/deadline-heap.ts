/**
 * A binary min-heap of deadlines, for the engine's silent-sensor check: the earliest deadline is
 * looked at in O(1) and taken in O(log n). Small and specific (entries carry their sensor's
 * state), so written here rather than taken from a package.
 */

/** One queued deadline and what it belongs to. */
export interface Deadline<T> {
  at: number;
  item: T;
}

/** Min-heap on `at`; ties come out in any order (the engine sorts what it takes). */
export class DeadlineHeap<T> {
  private readonly entries: Deadline<T>[] = [];

  /** How many deadlines are queued. */
  get size(): number {
    return this.entries.length;
  }

  /** The earliest deadline, or undefined when empty. */
  peek(): Deadline<T> | undefined {
    return this.entries[0];
  }

  /** Queue a deadline. */
  push(at: number, item: T): void {
    const list = this.entries;
    list.push({ at, item });
    let child = list.length - 1;
    while (child > 0) {
      const parent = (child - 1) >> 1;
      if (list[parent].at <= list[child].at) break;
      [list[parent], list[child]] = [list[child], list[parent]];
      child = parent;
    }
  }

  /** Take the earliest deadline. */
  pop(): Deadline<T> | undefined {
    const list = this.entries;
    const top = list[0];
    const last = list.pop();
    if (list.length === 0 || last === undefined) return top;
    list[0] = last;
    let parent = 0;
    for (;;) {
      const left = 2 * parent + 1;
      const right = left + 1;
      let smallest = parent;
      if (left < list.length && list[left].at < list[smallest].at) smallest = left;
      if (right < list.length && list[right].at < list[smallest].at) smallest = right;
      if (smallest === parent) return top;
      [list[parent], list[smallest]] = [list[smallest], list[parent]];
      parent = smallest;
    }
  }

  /** Drop every deadline. */
  clear(): void {
    this.entries.length = 0;
  }
}
