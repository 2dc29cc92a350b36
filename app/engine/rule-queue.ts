/**
 * Rules shared between the command line's two threads (`rule-thread.ts`): each thread, once its
 * own heavy rule is solved, takes the next rule nobody has taken, until none is left. The queue's
 * counter lives in shared memory, so the two threads see each other's takes at once. Free of the
 * solvers (`solve-thread-share.ts` uses it), so the command line can make one before loading them.
 */
import type { RuleKey } from "./problem";

/** Rules either thread may solve, in the order they are taken, and the index of the next (shared memory). */
export interface RuleQueue {
  rules: RuleKey[];
  next: Int32Array;
}

export function ruleQueue(rules: RuleKey[]): RuleQueue {
  return { rules, next: new Int32Array(new SharedArrayBuffer(Int32Array.BYTES_PER_ELEMENT)) };
}

/** The next rule nobody has taken, or null; each rule goes to exactly one thread (an atomic add). */
export function takeRule(queue: RuleQueue): RuleKey | null {
  const index = Atomics.add(queue.next, 0, 1);
  return index < queue.rules.length ? queue.rules[index] : null;
}
