/**
 * The PyTorch side of the benchmark as a child process (`reference.py`), spoken to one JSON line
 * at a time, and the files that carry arrays to it. Which Python: `STEPWELL_BENCH_PYTHON`, else
 * the project's pinned `.venv-torch/bin/python` (torch, NumPy, SciPy; made by
 * `bash test/reference/export/make-venv.sh`), else Debian's `/usr/bin/python3`.
 */
import { spawn, type ChildProcessWithoutNullStreams } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createInterface } from 'node:readline';

const ROOT = join(__dirname, '../..');

/** The interpreter the reference runs in (see the module comment). */
export function referencePython(): string {
  const chosen = process.env.STEPWELL_BENCH_PYTHON;
  if (chosen) return chosen;
  const venv = join(ROOT, '.venv-torch/bin/python');
  return existsSync(venv) ? venv : '/usr/bin/python3';
}

/** Per-repetition wall-clock and process CPU milliseconds, plus the side's check numbers. */
export interface Timing {
  wall: number[];
  cpu: number[];
  check: Record<string, number>;
}

/** A running reference process. */
export class Reference {
  private readonly child: ChildProcessWithoutNullStreams;
  private readonly lines: AsyncIterator<string>;
  private readonly dir = mkdtempSync(join(tmpdir(), 'stepwell-bench-'));
  private files = 0;

  constructor(readonly python = referencePython()) {
    this.child = spawn(python, [join(__dirname, 'reference.py')], { stdio: ['pipe', 'pipe', 'pipe'] });
    this.child.stderr.on('data', (d: Buffer) => process.stderr.write(`[reference] ${d.toString()}`));
    this.lines = createInterface({ input: this.child.stdout })[Symbol.asyncIterator]();
  }

  /** Sends one request and waits for its reply; a reply with `error` throws. */
  async ask<T = Record<string, unknown>>(request: Record<string, unknown>): Promise<T> {
    this.child.stdin.write(`${JSON.stringify(request)}\n`);
    const next = await this.lines.next();
    if (next.done) throw new Error(`the reference process (${this.python}) ended; is torch installed for it?`);
    const reply = JSON.parse(next.value) as T & { error?: string };
    if (reply.error !== undefined) throw new Error(`reference: ${reply.error} (request ${JSON.stringify(request).slice(0, 200)})`);
    return reply;
  }

  /** Writes `a` as raw little-endian float64 and returns the file's path. */
  file(a: Float64Array): string {
    const path = join(this.dir, `a${this.files++}.f64`);
    writeFileSync(path, new Uint8Array(a.buffer, a.byteOffset, a.byteLength));
    return path;
  }

  /**
   * Ends the process, removes the array files and resolves once it has exited: the next
   * measurements (the kernels against the peak) must not share the machine with its teardown.
   */
  async close(): Promise<void> {
    const exited = this.child.exitCode !== null || this.child.signalCode !== null ? Promise.resolve() : new Promise<void>((resolve) => this.child.once('exit', () => resolve()));
    this.child.stdin.end();
    this.child.kill();
    rmSync(this.dir, { recursive: true, force: true });
    await exited;
  }
}
