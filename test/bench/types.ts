/** One measured figure of a benchmark. */
export interface BenchResult {
  /** What was measured, e.g. "gradient 4-16-16-1 tanh, batch 64". */
  name: string;
  /** Median wall time of one repetition in milliseconds. */
  ms: number;
  /** Repetitions timed. */
  reps: number;
  /** A comparison figure measured elsewhere, when one exists (e.g. PyTorch CPU). */
  reference?: { ms: number; what: string };
  /** Free-form extra numbers (counts, sizes, errors). */
  extra?: Record<string, number | string>;
}

/** A benchmark module: `test/bench/*.bench.ts` exports `run`. */
export interface BenchModule {
  title: string;
  run(): Promise<BenchResult[]> | BenchResult[];
}

/** Median time of `fn` over repetitions after a warm-up, bounded by a time budget. */
export function timeIt(fn: () => void, budgetMs = 1500, maxReps = 2000): { ms: number; reps: number } {
  for (let i = 0; i < 3; i++) fn();
  const times: number[] = [];
  const start = performance.now();
  while (times.length < maxReps && (times.length < 5 || performance.now() - start < budgetMs)) {
    const t = performance.now();
    fn();
    times.push(performance.now() - t);
  }
  times.sort((a, b) => a - b);
  return { ms: times[times.length >> 1], reps: times.length };
}
