import { describe, expect, it } from 'vitest';
import { CommitHints, type CommitOffset } from '../../../services/monitor/commit-hints.js';

/** A commit function whose requests the test answers one by one. */
function gatedCommit() {
  const sent: CommitOffset[][] = [];
  const answers: { resolve: () => void; reject: (e: Error) => void }[] = [];
  const commit = (offsets: CommitOffset[]) =>
    new Promise<void>((resolve, reject) => {
      sent.push(offsets);
      answers.push({ resolve, reject });
    });
  return { sent, answers, commit };
}

const tick = () => new Promise((resolve) => setImmediate(resolve));

describe('CommitHints', () => {
  it('keeps one request in flight and sends the newest offset per partition noted meanwhile', async () => {
    const gate = gatedCommit();
    const hints = new CommitHints(gate.commit, () => undefined);
    hints.note(0, '10');
    hints.note(1, '5');
    hints.note(0, '12');
    hints.note(1, '7');
    await tick();
    expect(gate.sent).toEqual([[{ partition: 0, offset: '10' }]]);
    gate.answers[0].resolve();
    await tick();
    expect(gate.sent[1]).toEqual([
      { partition: 1, offset: '7' },
      { partition: 0, offset: '12' },
    ]);
    gate.answers[1].resolve();
    await hints.settled();
    expect(gate.sent).toHaveLength(2);
  });

  it('reports a failed commit and goes on with the offsets noted after it', async () => {
    const gate = gatedCommit();
    const failures: unknown[] = [];
    const hints = new CommitHints(gate.commit, (e) => failures.push(e));
    hints.note(3, '100');
    hints.note(3, '110');
    gate.answers[0].reject(new Error('coordinator gone'));
    await tick();
    expect(failures).toHaveLength(1);
    expect(gate.sent[1]).toEqual([{ partition: 3, offset: '110' }]);
    gate.answers[1].resolve();
    await hints.settled();
  });

  it('never sends an offset of a partition forgotten before its turn', async () => {
    const gate = gatedCommit();
    const hints = new CommitHints(gate.commit, () => undefined);
    hints.note(0, '1');
    hints.note(2, '9');
    hints.forget(2);
    gate.answers[0].resolve();
    await hints.settled();
    expect(gate.sent).toEqual([[{ partition: 0, offset: '1' }]]);
  });
});
