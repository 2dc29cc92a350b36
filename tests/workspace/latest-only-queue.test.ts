/**
 * The what-if queue between the page and the engine worker: a change goes to the worker at once
 * when it is idle; while it solves, only the newest change waits; only the newest answer is shown.
 */
import { describe, expect, it } from "vitest";
import { LatestOnlyQueue } from "../../app/routes/scenario-workspace/latest-only-queue";

function recordingQueue() {
  const posted: Array<[number, string]> = [];
  const queue = new LatestOnlyQueue<string>((id, payload) => posted.push([id, payload]));
  return { queue, posted };
}

describe("the what-if queue", () => {
  it("posts a request at once when the worker is idle, and shows its answer", () => {
    const { queue, posted } = recordingQueue();
    const id = queue.submit("κ = 20");
    expect(posted).toEqual([[id, "κ = 20"]]);
    expect(queue.answered(id)).toBe(true);
  });

  it("keeps only the newest request while the worker solves, and drops the stale answer", () => {
    const { queue, posted } = recordingQueue();
    const first = queue.submit("κ = 20");
    queue.submit("κ = 21");
    queue.submit("κ = 22");
    const newest = queue.submit("κ = 23");
    // Nothing more reaches the worker until it answers.
    expect(posted).toEqual([[first, "κ = 20"]]);
    // The first answer is stale; answering it sends the newest request, skipping 21 and 22.
    expect(queue.answered(first)).toBe(false);
    expect(posted).toEqual([
      [first, "κ = 20"],
      [newest, "κ = 23"],
    ]);
    expect(queue.answered(newest)).toBe(true);
    // The worker is idle again: the next change goes at once.
    const next = queue.submit("κ = 24");
    expect(posted.at(-1)).toEqual([next, "κ = 24"]);
  });

  it("ignores answers it is not waiting for (a repeat, or an id it never sent)", () => {
    const { queue } = recordingQueue();
    const id = queue.submit("κ = 20");
    expect(queue.answered(id + 7)).toBe(false);
    expect(queue.answered(id)).toBe(true);
    expect(queue.answered(id)).toBe(false);
  });

  it("after cancel, drops the waiting request and the answer on its way", () => {
    const { queue, posted } = recordingQueue();
    const first = queue.submit("κ = 20");
    queue.submit("κ = 21");
    queue.cancel();
    expect(queue.answered(first)).toBe(false);
    // The waiting request was forgotten, not sent.
    expect(posted).toEqual([[first, "κ = 20"]]);
    const next = queue.submit("κ = 25");
    expect(posted.at(-1)).toEqual([next, "κ = 25"]);
    expect(queue.answered(next)).toBe(true);
  });

  it("a change made while a cancelled request is still solving waits for that answer", () => {
    const { queue, posted } = recordingQueue();
    const first = queue.submit("κ = 20");
    queue.cancel();
    const next = queue.submit("κ = 30");
    // The worker is still busy with the first request: one request at a time.
    expect(posted).toEqual([[first, "κ = 20"]]);
    expect(queue.answered(first)).toBe(false);
    expect(posted.at(-1)).toEqual([next, "κ = 30"]);
    expect(queue.answered(next)).toBe(true);
  });

  it("when the worker is lost, the next request goes at once instead of waiting for an answer that never comes", () => {
    const { queue, posted } = recordingQueue();
    const first = queue.submit("κ = 20");
    queue.submit("κ = 21");
    queue.lost();
    const next = queue.submit("κ = 22");
    expect(posted).toEqual([
      [first, "κ = 20"],
      [next, "κ = 22"],
    ]);
    expect(queue.answered(first)).toBe(false);
    expect(queue.answered(next)).toBe(true);
  });
});
