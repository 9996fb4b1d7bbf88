/** Checkpoint thinning and trajectory capping: mandatory entries survive, budgets hold, repeated capping is stable. */
import { capTrajectory, thinCheckpoints } from '../../../src/ledger';
import { record } from './fixtures';

const range = (n: number) => Array.from({ length: n }, (_, i) => i);

describe('thinCheckpoints', () => {
  it('keeps everything within the budget (sorted, without duplicates)', () => {
    expect(thinCheckpoints([5, 0, 3, 3, 9], 10)).toEqual([0, 3, 5, 9]);
    expect(thinCheckpoints([], 5)).toEqual([]);
  });

  it.each([
    [1000, 10],
    [1000, 24],
    [57, 6],
    [3, 2],
  ])('%d steps into %d: first, head and the budget', (n, max) => {
    const kept = thinCheckpoints(range(n), max);
    expect(kept).toHaveLength(Math.min(n, max));
    expect(kept[0]).toBe(0);
    expect(kept[kept.length - 1]).toBe(n - 1);
  });

  it('keeps pinned steps, even beyond the budget, and ignores pins that are not checkpoints', () => {
    const kept = thinCheckpoints(range(1000), 4, [123, 456, 789, 5000]);
    expect(kept).toEqual([0, 123, 456, 789, 999]);
    const some = thinCheckpoints(range(1000), 8, [321]);
    expect(some).toContain(321);
    expect(some).toHaveLength(8);
  });

  it('is dense near the head and sparse in the far past (gaps grow going back)', () => {
    const kept = thinCheckpoints(range(10001), 12);
    const gaps = kept.slice(1).map((s, i) => s - kept[i]).reverse(); // nearest the head first
    for (let i = 1; i < gaps.length - 1; i++) expect(gaps[i]).toBeGreaterThanOrEqual(gaps[i - 1]);
    expect(gaps[0]).toBeLessThan(10);
    expect(Math.max(...gaps)).toBeGreaterThan(1000);
  });

  it('works for a branch that starts late and for irregular steps', () => {
    const steps = [40, 41, 43, 47, 55, 71, 103, 167, 295, 551];
    const kept = thinCheckpoints(steps, 5);
    expect(kept).toHaveLength(5);
    expect(kept[0]).toBe(40);
    expect(kept[4]).toBe(551);
    for (const s of kept) expect(steps).toContain(s);
  });
});

describe('capTrajectory', () => {
  const traj = (n: number) => range(n).map((s) => record(s, false));

  it('keeps every record up to the cap', () => {
    const t = traj(50);
    const c = capTrajectory(t, 50);
    expect(c).toEqual(t);
    expect(c).not.toBe(t);
  });

  it.each([
    [5000, 1000],
    [1001, 1000],
    [777, 100],
  ])('%d records capped at %d', (n, cap) => {
    const c = capTrajectory(traj(n), cap, [333]);
    expect(c.length).toBeLessThanOrEqual(cap);
    expect(c.length).toBeGreaterThan(cap / 2 - 3);
    expect(c[0].step).toBe(0);
    expect(c[c.length - 1].step).toBe(n - 1);
    expect(c.map((r) => r.step)).toContain(333);
    // Evenly spaced apart from the mandatory ones.
    const regular = c.map((r) => r.step).filter((s) => s !== 333 && s !== n - 1);
    const gaps = new Set(regular.slice(1).map((s, i) => s - regular[i]));
    expect(gaps.size).toBe(1);
  });

  it('keeps every record a finding refers to, even past the cap', () => {
    const keep = range(40).map((i) => i * 25 + 1);
    const c = capTrajectory(traj(1000), 20, keep);
    for (const k of keep) expect(c.map((r) => r.step)).toContain(k);
  });

  it('capping again changes nothing, and a longer run keeps the early records it kept before', () => {
    const once = capTrajectory(traj(3000), 500, [17]);
    expect(capTrajectory(once, 500, [17])).toEqual(once);
    const longer = capTrajectory([...once, ...traj(3200).slice(3000)], 500, [17]);
    const early = new Set(longer.map((r) => r.step));
    const stride = once[2].step - once[1].step;
    for (const r of once) if (r.step % (2 * stride) === 0) expect(early.has(r.step)).toBe(true);
  });
});
