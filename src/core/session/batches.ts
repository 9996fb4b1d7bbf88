/**
 * Seeded mini-batch order: each epoch's row order is a fresh Fisher–Yates permutation of
 * 0…N−1 drawn from the session's 'batches' generator; batches are consecutive slices of it.
 * The last batch of an epoch is the remainder (N mod B rows) and is used as is — it is not
 * dropped and not padded — so every row is seen exactly once per epoch (PyTorch's DataLoader
 * with shuffle=True, drop_last=False behaves the same way; common practice).
 */
import type { Rng } from '../rng';

/** Mutable position in the row order (the batch part of a SessionState). */
export interface BatchPosition {
  epoch: number;
  cursor: number;
  order: Int32Array | null;
}

/** Draws a fresh permutation of 0…n−1 into `order` (allocated when null) and returns it. */
export function drawOrder(rng: Rng, n: number, order: Int32Array | null): Int32Array {
  const o = order !== null && order.length === n ? order : new Int32Array(n);
  for (let i = 0; i < n; i++) o[i] = i;
  rng.shuffle(o);
  return o;
}

/** Row buffers reused across steps: one of the batch size, one for a shorter remainder. */
export interface BatchBuffers {
  full: Int32Array;
  tail: Int32Array | null;
}

/**
 * Copies the next batch of `pos.order` into `buf.full` (B rows) or, at the end of an epoch,
 * into `buf.tail` (the remaining rows; reallocated only when its length changes, e.g. after a
 * branch changed the batch size mid-epoch) and advances the position; at the end of an epoch
 * the epoch counter is raised and the next permutation drawn in place. Returns the rows.
 */
export function nextBatch(rng: Rng, pos: BatchPosition, batch: number, buf: BatchBuffers): Int32Array {
  const order = pos.order;
  if (order === null) throw new Error('mini-batch session has no row order (state.order is null)');
  const n = order.length;
  const take = Math.min(batch, n - pos.cursor);
  let out = buf.full;
  if (take !== buf.full.length) {
    if (buf.tail === null || buf.tail.length !== take) buf.tail = new Int32Array(take);
    out = buf.tail;
  }
  for (let i = 0; i < take; i++) out[i] = order[pos.cursor + i];
  pos.cursor += take;
  if (pos.cursor >= n) {
    pos.epoch += 1;
    pos.cursor = 0;
    pos.order = drawOrder(rng, n, order);
  }
  return out;
}

/**
 * A fixed row subset of size k drawn once (first k of a permutation from `rng`), sorted
 * ascending so curvature products read the data in memory order.
 */
export function drawSubset(rng: Rng, n: number, k: number): Int32Array {
  const perm = drawOrder(rng, n, null);
  return perm.slice(0, k).sort();
}
