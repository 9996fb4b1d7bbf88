/**
 * Long readouts (the plane's grid rows, the range test's updates, the batch comparison's updates)
 * as resumable {@link GroveTask}s, so the engine worker runs them in slices with progress replies
 * and honours Stop between units exactly as it runs rewinds and replays; a synchronous caller runs
 * them whole.
 */
import type { GroveTask } from '../session/task';
import type { StepHooks } from '../session/live';

/** A {@link GroveTask} that can also be ended early with the result of what it has done. */
export interface StoppableTask<T> extends GroveTask<T> {
  /** Ends the task where it is and returns its (partial or null) result. */
  stop(): T;
}

/** A task of `total` units done in order by `unit(k)`, then `finish(stopped)`. */
export class UnitTask<T> implements StoppableTask<T> {
  private doneCount = 0;
  private value: { v: T } | null = null;

  /**
   * @param total - units in all (the task may end earlier when `unit` returns false)
   * @param unit - does unit k (0-based); returns false when nothing after it is worth doing
   * @param finish - the result from the units done; `stopped` is true when {@link UnitTask.stop} ended it early
   */
  constructor(readonly total: number, private readonly unit: (k: number) => boolean, private readonly finish: (stopped: boolean) => T) {
    if (!Number.isInteger(total) || total < 0) throw new RangeError(`a task needs a non-negative whole number of units, got ${total}`);
    if (total === 0) this.value = { v: finish(false) };
  }

  get done(): number {
    return this.doneCount;
  }

  get finished(): boolean {
    return this.value !== null;
  }

  /** Does units until the task is finished or `hooks.shouldStop()` (asked before every unit but the first of a call). */
  run(hooks?: StepHooks): boolean {
    let first = true;
    while (this.value === null) {
      if (!first && hooks?.shouldStop?.()) return false;
      first = false;
      const more = this.unit(this.doneCount);
      this.doneCount += 1;
      hooks?.onProgress?.(this.doneCount, this.total);
      if (!more || this.doneCount >= this.total) this.value = { v: this.finish(false) };
    }
    return true;
  }

  /** Ends the task where it is: the result of the units done so far, marked as stopped. */
  stop(): T {
    if (this.value === null) this.value = { v: this.finish(true) };
    return this.value.v;
  }

  result(): T {
    if (this.value === null) throw new Error(`the task is not finished (${this.doneCount} of ${this.total} units done): call run() until it returns true`);
    return this.value.v;
  }
}

/**
 * Runs a task whole, asking `keepGoing(done, total)` after every unit (a synchronous caller's Stop);
 * returns the result, or the stopped partial result when `keepGoing` said no.
 */
export function runUnits<T>(task: UnitTask<T>, keepGoing?: (done: number, total: number) => boolean): T {
  let stop = false;
  task.run({ onProgress: (d, n) => { if (keepGoing && !keepGoing(d, n)) stop = true; }, shouldStop: () => stop });
  return task.finished ? task.result() : task.stop();
}

/** `task` with its result passed through `f` (progress, slices and Stop are the task's own). */
export function mapTask<A, B>(task: StoppableTask<A>, f: (a: A) => B): StoppableTask<B> {
  let mapped: { v: B } | null = null;
  const once = (a: () => A): B => (mapped ??= { v: f(a()) }).v;
  return {
    get total() { return task.total; },
    get done() { return task.done; },
    get finished() { return task.finished; },
    run: (hooks) => task.run(hooks),
    result: () => once(() => task.result()),
    stop: () => once(() => task.stop()),
  };
}
