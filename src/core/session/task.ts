/**
 * Long grove work (rewind re-stepping, replays) as resumable tasks: a task is a list of legs,
 * each re-stepping one session from one step to another, and a result computed once every
 * leg is done. A caller that must stay responsive (a Web Worker) runs a task in slices with
 * {@link StepHooks.shouldStop} and yields between slices; a synchronous caller runs it whole.
 */
import type { StepRecord } from '../state';
import type { Session, StepHooks } from './live';

/** Long work that runs in slices: call {@link GroveTask.run} until it returns true. */
export interface GroveTask<T> {
  /** Updates the whole task applies. */
  readonly total: number;
  /** Updates applied so far. */
  readonly done: number;
  /** True once the result is there. */
  readonly finished: boolean;
  /**
   * Applies updates until the task is finished or `hooks.shouldStop()` returns true (asked
   * between updates; at least one update is applied per call while any remain).
   * `hooks.onProgress` receives (done, total) of the whole task.
   *
   * @returns true when the task is finished (its result computed).
   */
  run(hooks?: StepHooks): boolean;
  /** The result; throws while the task is not finished. */
  result(): T;
}

/** One leg: a session opened at step `from` and stepped to step `to`. */
export interface Leg {
  from: number;
  to: number;
  /** Makes the session (called once, when the leg starts; earlier legs are done by then). */
  open(): Session;
  /** After each update of this leg. */
  each?(session: Session, record: StepRecord): void;
  /** When the leg has reached `to` (also when `from` = `to`). */
  close?(session: Session): void;
}

/** A {@link GroveTask} over legs run in order, then `finish`. */
export class LegTask<T> implements GroveTask<T> {
  readonly total: number;
  private doneCount = 0;
  private leg = 0;
  private current: Session | null = null;
  private value: { v: T } | null = null;

  /**
   * @param legs - run in order; every leg must have `to` ≥ `from`.
   * @param finish - computes the result once every leg is done (called once).
   */
  constructor(private readonly legs: readonly Leg[], private readonly finish: () => T) {
    let total = 0;
    for (const l of legs) {
      if (!(l.to >= l.from)) throw new Error(`a task leg must not go backwards (from step ${l.from} to ${l.to})`);
      total += l.to - l.from;
    }
    this.total = total;
  }

  get done(): number {
    return this.doneCount;
  }

  get finished(): boolean {
    return this.value !== null;
  }

  run(hooks?: StepHooks): boolean {
    if (this.value !== null) return true;
    let first = true;
    while (this.leg < this.legs.length) {
      const leg = this.legs[this.leg];
      if (this.current === null) this.current = leg.open();
      const s = this.current;
      while (s.stepCount < leg.to) {
        if (!first && hooks?.shouldStop?.()) return false;
        first = false;
        const [r] = s.step(1);
        this.doneCount += 1;
        leg.each?.(s, r);
        hooks?.onProgress?.(this.doneCount, this.total);
      }
      leg.close?.(s);
      this.current = null;
      this.leg += 1;
    }
    this.value = { v: this.finish() };
    return true;
  }

  result(): T {
    if (this.value === null) throw new Error(`the task is not finished (${this.doneCount} of ${this.total} updates done): call run() until it returns true`);
    return this.value.v;
  }
}

/** Runs a task to the end in one call and returns its result. */
export function runToEnd<T>(task: GroveTask<T>): T {
  task.run();
  return task.result();
}
