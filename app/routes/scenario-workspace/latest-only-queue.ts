/**
 * What-if requests to the engine worker, newest first: at most one request is with the worker and
 * at most one waits. A request made while the worker is busy replaces the waiting one, so a dragged
 * slider never builds a backlog, and a request made while the worker is idle goes at once — no timer
 * delays the answer to a single change. Only the answer to the newest request is shown.
 */
export class LatestOnlyQueue<T> {
  private newest = 0;
  private inFlight: number | null = null;
  private waiting: { id: number; payload: T } | null = null;

  /** `post` hands a request to the worker; it is called from `submit` or from `answered`. */
  constructor(private readonly post: (id: number, payload: T) => void) {}

  /** Asks for `payload`; returns the request's id (answers echo it). */
  submit(payload: T): number {
    const id = ++this.newest;
    if (this.inFlight === null) this.send(id, payload);
    else this.waiting = { id, payload };
    return id;
  }

  /**
   * Records the worker's answer to request `id` and sends the waiting request, if any. True when
   * the answer is to the newest request (show it); false when it is stale or unknown (drop it).
   */
  answered(id: number): boolean {
    if (id !== this.inFlight) return false;
    this.inFlight = null;
    if (this.waiting) {
      const next = this.waiting;
      this.waiting = null;
      this.send(next.id, next.payload);
    }
    return id === this.newest;
  }

  /** Forgets the waiting request and makes any answer still on its way stale. */
  cancel(): void {
    this.waiting = null;
    this.newest += 1;
  }

  /** The worker will not answer (it failed): nothing is with it any more. */
  lost(): void {
    this.inFlight = null;
    this.waiting = null;
  }

  private send(id: number, payload: T): void {
    this.inFlight = id;
    this.post(id, payload);
  }
}
