/**
 * The Deeper tab's choice: which readout and the text of each option as the user typed it, and
 * the request they make (or the first problem, worded for the user). Limits are the worker's
 * ({@link DEEPER_LIMITS}), so the page refuses what the worker would refuse, with the field named.
 */
import type { DeeperKind, DeeperRequest, DeeperResult } from '../worker/deeper';
import { DEEPER_LIMITS } from '../worker/deeper';
import { readNumber } from './forms';

/** The chosen readout and its option texts. */
export interface DeeperChoice {
  kind: DeeperKind;
  /** Grid points along each line (default 41). */
  linePoints: string;
  directions: 'random' | 'eigenvectors';
  /** Grid points per side of the plane (default 21). */
  planePoints: string;
  /** Range test: smallest and largest learning rate and the number of rates (defaults 1e-5, 10, 40). */
  rangeFrom: string;
  rangeTo: string;
  rangeSteps: string;
  /** Significant bits kept, comma-separated (default 16, 10, 8, 6, 4). */
  bits: string;
  /** Batch sizes compared, comma-separated, and the examples each run draws. */
  batchSizes: string;
  batchExamples: string;
}

/** The choice a cell starts with (the core readouts' own defaults). */
export const DEFAULT_DEEPER_CHOICE: Readonly<DeeperChoice> = {
  kind: 'line',
  linePoints: '41',
  directions: 'random',
  planePoints: '21',
  rangeFrom: '1e-5',
  rangeTo: '10',
  rangeSteps: '40',
  bits: '16, 10, 8, 6, 4',
  batchSizes: '2, 8, 32',
  batchExamples: '512'
};

/** What each kind is called on buttons and in progress lines. */
export const DEEPER_LABELS: Readonly<Record<DeeperKind, string>> = {
  line: 'Line profile',
  plane: '2-D slice',
  range: 'Learning-rate range test',
  precision: 'Precision tolerance',
  batch: 'Batch sizes'
};

/** A whole number in [lo, hi] from `text`, or the problem. */
function count(text: string, field: string, lo: number, hi: number): number | string {
  const v = readNumber(text, field, true, lo);
  if (typeof v === 'string') return v;
  return v > hi ? `${field} must be at most ${hi}, got ${text}` : v;
}

/** A comma-separated list of whole numbers in [lo, hi], or the problem. */
function counts(text: string, field: string, lo: number, hi: number): number[] | string {
  const parts = text.split(',').map((p) => p.trim()).filter((p) => p !== '');
  if (parts.length === 0) return `${field} must list at least one whole number`;
  const out: number[] = [];
  for (const p of parts) {
    const v = count(p, field, lo, hi);
    if (typeof v === 'string') return v;
    out.push(v);
  }
  return out;
}

/**
 * The request the choice makes, or the first problem of its options.
 *
 * @returns a {@link DeeperRequest}, or a message naming the option (e.g. "points per side must be at most 61, got 80").
 */
export function deeperRequestOf(c: DeeperChoice): DeeperRequest | string {
  switch (c.kind) {
    case 'line': {
      const points = count(c.linePoints, 'points along each line', 5, DEEPER_LIMITS.linePoints);
      return typeof points === 'string' ? points : { what: 'line', points };
    }
    case 'plane': {
      const points = count(c.planePoints, 'points per side', 3, DEEPER_LIMITS.planePoints);
      return typeof points === 'string' ? points : { what: 'plane', directions: c.directions, points };
    }
    case 'range': {
      const from = readNumber(c.rangeFrom, 'smallest learning rate', false, Number.MIN_VALUE);
      if (typeof from === 'string') return from;
      const to = readNumber(c.rangeTo, 'largest learning rate', false, Number.MIN_VALUE);
      if (typeof to === 'string') return to;
      if (from >= to) return `the smallest learning rate (${c.rangeFrom}) must be below the largest (${c.rangeTo})`;
      const steps = count(c.rangeSteps, 'rates tried', 3, DEEPER_LIMITS.rangeSteps);
      return typeof steps === 'string' ? steps : { what: 'range', from, to, steps };
    }
    case 'precision': {
      const bits = counts(c.bits, 'significant bits', 1, 52);
      return typeof bits === 'string' ? bits : { what: 'precision', bits };
    }
    case 'batch': {
      const sizes = counts(c.batchSizes, 'batch sizes', 1, Number.MAX_SAFE_INTEGER);
      if (typeof sizes === 'string') return sizes;
      if (sizes.length < 2 || sizes.length > DEEPER_LIMITS.batchSizes) return `batch sizes must list 2 to ${DEEPER_LIMITS.batchSizes} sizes, got ${sizes.length}`;
      const examples = count(c.batchExamples, 'examples per run', 1, DEEPER_LIMITS.batchExamples);
      return typeof examples === 'string' ? examples : { what: 'batch', sizes, examples };
    }
  }
}

/**
 * The option texts that would take `kept` again (so *Take it again* repeats what is shown); the
 * texts of `c` where the kept result does not say.
 */
export function choiceOfKept(c: DeeperChoice, kept: DeeperResult | undefined): DeeperChoice {
  if (kept === undefined) return c;
  switch (kept.what) {
    case 'line':
      return { ...c, linePoints: String(kept.result.update.t.length) };
    case 'plane':
      return { ...c, directions: kept.result.kind, planePoints: String(kept.result.alpha.length) };
    case 'range': {
      const g = kept.result.grid;
      return g.length < 2 ? c : { ...c, rangeFrom: String(g[0]), rangeTo: String(g[g.length - 1]), rangeSteps: String(g.length) };
    }
    case 'precision':
      return { ...c, bits: kept.result.rows.filter((r) => r.bits < 53).map((r) => r.bits).join(', ') };
    case 'batch':
      return { ...c, batchSizes: kept.result.runs.map((r) => r.batch).join(', '), batchExamples: String(kept.result.budget) };
  }
}
