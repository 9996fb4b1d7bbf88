/**
 * Stepwell and a notebook's kernel. Stepwell cells never run in the kernel, but two things use
 * it: loading the `%%stepwell` magic (so a stepwell cell that reaches a Python kernel by another
 * route prints a notice instead of failing), and "Take Data from the Kernel", which reads named
 * arrays through the execute request's `user_expressions` (no code of ours runs on the server).
 */
import type { NotebookPanel } from '@jupyterlab/notebook';
import type { Kernel, KernelMessage } from '@jupyterlab/services';
import {
  arrayExpression,
  checkName,
  checkTakenSet,
  readArrayReply,
  TAKE_ROLES,
  type ExpressionReply,
  type TakenArray,
  type TakeProblem,
  type TakeRole
} from '../experiment/take';
import type { IStepwellCells } from './tokens';

/** Loads the magic when the `stepwell` Python package is importable; silent and never failing. */
const LOAD_MAGIC = 'try:\n    get_ipython().run_line_magic("load_ext", "stepwell")\nexcept Exception:\n    pass\n';

/** Whether a kernel speaks Python (the magic and the array expression are Python). */
async function isPython(kernel: Kernel.IKernelConnection): Promise<boolean> {
  try {
    const info = await kernel.info;
    return (info?.language_info?.name ?? '').toLowerCase() === 'python';
  } catch {
    return false;
  }
}

/**
 * Loads the `%%stepwell` magic into the notebook's Python kernel each time one starts or
 * restarts, when the notebook holds a stepwell cell. Sent as a silent request: no output, no
 * execution count, nothing in the history.
 */
export function loadMagicInKernel(panel: NotebookPanel, cells: IStepwellCells): void {
  const hasStepwellCell = (): boolean => {
    const model = panel.content.model;
    if (model === null) return false;
    for (let i = 0; i < model.cells.length; i++) if (cells.isStepwell(model.cells.get(i))) return true;
    return false;
  };
  let loadedFor: Kernel.IKernelConnection | null = null;
  const onStatus = (kernel: Kernel.IKernelConnection, status: Kernel.Status): void => {
    if (status === 'restarting' || status === 'autorestarting') loadedFor = null;
    if (status !== 'idle' || loadedFor === kernel || !hasStepwellCell()) return;
    loadedFor = kernel;
    void isPython(kernel).then(python => {
      if (python && !kernel.isDisposed) kernel.requestExecute({ code: LOAD_MAGIC, silent: true, store_history: false, allow_stdin: false });
    });
  };
  let current: Kernel.IKernelConnection | null = null;
  const follow = (): void => {
    current?.statusChanged.disconnect(onStatus);
    current = panel.sessionContext.session?.kernel ?? null;
    current?.statusChanged.connect(onStatus);
    if (current !== null) onStatus(current, current.status);
  };
  panel.sessionContext.kernelChanged.connect(follow);
  panel.disposed.connect(() => current?.statusChanged.disconnect(onStatus));
  follow();
}

/** Outcome of reading arrays: all of them, or every problem found. */
export type TakeOutcome = { ok: true; arrays: TakenArray[] } | { ok: false; problems: string[] };

/**
 * Reads the named arrays (by role; blank names are skipped) from `kernel` in one silent execute
 * request, each checked in the kernel against `limit` numbers before anything is sent.
 */
export async function takeArrays(kernel: Kernel.IKernelConnection, names: Record<TakeRole, string>, limit: number): Promise<TakeOutcome> {
  const roles = TAKE_ROLES.filter(r => names[r] !== '');
  const nameProblems = roles.map(r => checkName(r, names[r])).filter((p): p is TakeProblem => p !== null);
  if (nameProblems.length > 0) return { ok: false, problems: nameProblems.map(p => p.message) };
  const missing = (['x', 'y'] as const).filter(r => names[r] === '');
  if (missing.length > 0) return { ok: false, problems: missing.map(r => `${r} is required: name an array of the kernel`) };
  if (!(await isPython(kernel))) return { ok: false, problems: ['the kernel is not a Python kernel; Stepwell reads arrays through Python and NumPy'] };
  const user_expressions: Record<string, string> = {};
  for (const r of roles) user_expressions[r] = arrayExpression(names[r], limit);
  const future = kernel.requestExecute({ code: '', silent: true, store_history: false, allow_stdin: false, user_expressions });
  const reply: KernelMessage.IExecuteReplyMsg = await future.done;
  const content = reply.content;
  if (content.status !== 'ok') {
    const detail = content.status === 'error' ? `${content.ename}: ${content.evalue}` : content.status;
    return { ok: false, problems: [`the kernel refused the request (${detail})`] };
  }
  const answers = content.user_expressions as Record<string, ExpressionReply | undefined>;
  const arrays: TakenArray[] = [];
  const problems: string[] = [];
  for (const r of roles) {
    const read = readArrayReply(r, names[r], answers[r], limit);
    if ('values' in read) arrays.push(read);
    else problems.push(read.message);
  }
  if (problems.length > 0) return { ok: false, problems };
  const setProblems = checkTakenSet(arrays);
  return setProblems.length > 0 ? { ok: false, problems: setProblems } : { ok: true, arrays };
}
