import { lanczosExtremes } from '../../../src/core/linalg/lanczos';
import { Rng } from '../../../src/core/rng';
import { EXTREME_CASES, golden, matvec } from './fixtures';

type ExtremeGolden = { n: number; top5: number[]; bottom5: number[] };

describe('Lanczos extremes against torch.linalg.eigvalsh', () => {
  // source: torch.linalg.eigvalsh, torch 1.13 float64, via make_golden.py; 1e-8 relative.
  it.each(Object.keys(EXTREME_CASES).flatMap((name) => [11, 12].map((seed) => [name, seed] as const)))(
    '%s (start seed %d): top-5 and bottom-5',
    (name, seed) => {
      const ref = (golden.extreme as Record<string, ExtremeGolden>)[name];
      const r = lanczosExtremes(matvec(EXTREME_CASES[name](), ref.n), ref.n, Rng.fromSeed(seed), { k: 5, which: 'both' });
      expect(r.stop).toBe('converged');
      expect(r.largest).toHaveLength(5);
      expect(r.smallest).toHaveLength(5);
      expect([ref.top5.length, ref.bottom5.length]).toEqual([5, 5]);
      r.largest.forEach((p, i) => expect(Math.abs(p.value - ref.top5[i])).toBeLessThanOrEqual(1e-8 * Math.abs(ref.top5[i])));
      r.smallest.forEach((p, i) => expect(Math.abs(p.value - ref.bottom5[i])).toBeLessThanOrEqual(1e-8 * Math.abs(ref.bottom5[i])));
    }
  );
});
