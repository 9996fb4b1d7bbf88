/**
 * Every threshold the readouts and the findings compare with, in one place, each with its source
 * in the form of `CHECKS.md`: `source: …` (a published work), `common practice (no single
 * source)`, or `from memory: …`. A finding copies `source` into its `source` field verbatim, so
 * the strings below are what a user reads on hover and in `stepwell diagnose`.
 *
 * Changing a value here changes what every rule, readout and test reads; the tests name the
 * constant, never a copy of its number.
 */
import { AUDIT_THRESHOLDS } from '../gradcheck';
import { DEFAULT_DIVERGENCE_FACTOR } from '../../session/stop';

/** A number compared with, and where it comes from. */
export interface Threshold {
  readonly value: number;
  readonly source: string;
}

const COMMON = 'common practice (no single source)';

/** The thresholds (see each entry's `source`). */
export const THRESHOLDS = {
  /** |a| beyond which a tanh unit counts as saturated: tanh′(2) = 0.0707, 7% of its peak slope. */
  tanhSaturation: { value: 2, source: `${COMMON}: tanh′(a) = 1 − tanh²(a) falls below 7% of its peak beyond |a| = 2` },
  /** |a| beyond which a sigmoid unit counts as saturated: the same point, since σ(a) = (1 + tanh(a/2))/2 (σ′(4) = 0.0177 = 7% of 1/4). */
  sigmoidSaturation: { value: 4, source: `${COMMON}: σ′(a) falls below 7% of its peak 1/4 beyond |a| = 4 (the tanh threshold, as σ(a) = (1 + tanh(a/2))/2)` },
  /** Share of a layer's pre-activations (rows × units) in the saturated zone above which `saturated-units` fires. */
  saturatedShare: { value: 0.3, source: `${COMMON}: pre-activations of a saturating unit should start mostly inside its near-linear zone (Glorot & Bengio, AISTATS 2010 — from memory); 30% is ours` },
  /** Share of a layer's ReLU-family units inactive on every row above which `dead-units` fires. */
  deadShare: { value: 0.3, source: `${COMMON}: a ReLU unit whose pre-activation is ≤ 0 on every row passes no gradient and cannot recover (Lu et al., "Dying ReLU and initialization", 2020 — from memory); 30% is ours` },
  /** Factor by which a layer's initial weight spread may differ from the fan-in rule before `init-scale` fires. */
  initSpreadFactor: { value: 2, source: 'source: fan-in rules, LeCun et al. "Efficient BackProp" 1998 (1/fan_in), He et al. ICCV 2015 (2/fan_in for ReLU); the factor 2 is common practice' },
  /** Ratio of the largest to the smallest feature spread above which `inputs-unscaled` fires. */
  inputSpreadRatio: { value: 100, source: 'source: LeCun et al., "Efficient BackProp", 1998, §4.3, from memory (inputs of zero mean and equal variance); the factor 100 (two orders of magnitude) is common practice' },
  /** |mean| / spread of one feature above which `inputs-unscaled` fires (an offset far larger than the variation). */
  inputOffsetRatio: { value: 10, source: 'source: LeCun et al., "Efficient BackProp", 1998, §4.3, from memory (inputs of zero mean: an offset adds one large Hessian eigenvalue); the factor 10 is common practice' },
  /** Share of rows that repeat an earlier row exactly (inputs and targets) above which `duplicate-rows` fires. */
  duplicateShare: { value: 0.1, source: `${COMMON}: exact repeats re-weight the loss and leak into held-out estimates` },
  /** Centre of the healthy band of ‖ΔW‖/‖W‖ per layer and step. */
  updateRatioCenter: { value: 1e-3, source: 'source: Stanford CS231n notes, "Neural Networks Part 3" (ratio of updates to weights near 1e-3; from memory)' },
  /** ‖ΔW‖/‖W‖ above which a layer's updates are far too large (two orders of magnitude above the centre). */
  updateRatioHigh: { value: 1e-1, source: 'source: Stanford CS231n notes (healthy near 1e-3; from memory); two orders of magnitude above is common practice for "far"' },
  /** ‖ΔW‖/‖W‖ below which a layer barely learns (two orders of magnitude below the centre). */
  updateRatioLow: { value: 1e-5, source: 'source: Stanford CS231n notes (healthy near 1e-3; from memory); two orders of magnitude below is common practice for "far"' },
  /** Half-width of the band drawn on the balance heat map, in decades around the centre. */
  updateRatioBandDecades: { value: 1, source: `${COMMON}: one decade either side of 1e-3` },
  /** Recent records the balance verdicts take the median over. */
  balanceWindow: { value: 10, source: `${COMMON}: a median over the last 10 updates smooths single-step noise` },
  /** ‖∇W_l‖ / ‖∇W_last‖ below which gradients vanish towards the input. */
  gradientDepthRatio: { value: 1e-2, source: 'source: Glorot & Bengio, AISTATS 2010 (back-propagated gradients shrink towards the input with saturating units; from memory); two orders of magnitude is common practice' },
  /** Fewest recent records a plateau or overfitting verdict is taken over. */
  trendWindow: { value: 10, source: `${COMMON}: at least 10 updates before calling a trend` },
  /** Relative loss decrease over the window below which the loss counts as flat. */
  plateauDecrease: { value: 5e-2, source: `${COMMON}: less than 5% change over the last quarter of the run` },
  /** Loss, as a share of the best constant predictor's loss, above which the loss is far from a minimum. */
  plateauBaseline: { value: 0.9, source: `${COMMON}: a model that explains less than 10% of what the best constant prediction leaves has not started learning` },
  /** lr / largest stable lr above which the step is unstable on the local quadratic model. */
  stabilityMargin: { value: 1, source: 'source: gradient descent on a quadratic converges iff η < 2/λmax (Nocedal & Wright, Numerical Optimization, 2nd ed., 2006, ch. 3); 2(1 + μ)/λmax with heavy-ball momentum (Polyak 1964)' },
  /** Loss, as a multiple of its start, above which the run has diverged (also non-finite). */
  divergenceFactor: { value: DEFAULT_DIVERGENCE_FACTOR, source: `${COMMON}: a thousandfold rise of the loss (the engine's 'diverged' stop condition)` },
  /** |λmin| / λmax above which negative curvature is large. */
  negativeCurvatureRatio: { value: 0.1, source: `${COMMON}: negative eigenvalues of a trained network's Hessian are usually small against λmax (Ghorbani, Krishnan & Xiao, ICML 2019 — from memory); 0.1 is ours` },
  /** Condition number (λmax over the smallest positive eigenvalue) above which plain gradient steps crawl. */
  conditionNumber: { value: 1e4, source: 'source: gradient descent on a quadratic contracts the slowest direction by 1 − 2/κ per step at best (Nocedal & Wright 2006, §3.3); 1e4 is common practice' },
  /** Relative rise of the held-out loss above its minimum that counts as overfitting. */
  overfittingRise: { value: 0.1, source: `${COMMON}: held-out loss 10% above its minimum while the training loss still falls (early stopping, Prechelt 1998 — from memory)` },
  /** Gradient-audit relative error above which a layer's verdict is worse than acceptable. */
  auditAcceptable: { value: AUDIT_THRESHOLDS.acceptable, source: 'source: Stanford CS231n notes, "Neural Networks Part 3" (relative error above 1e-4 is suspicious, above 1e-2 wrong; from memory)' },
  /** Share of the measured stability limit a step-size proposal sets (a 10% margin below the limit). */
  proposalLrFraction: { value: 0.9, source: `${COMMON}: 10% below the largest stable learning rate of the local quadratic model` },
  /** Share of the measured limit a proposal sets when it fits lr to a new setup (inputs standardized). */
  fittedLrFraction: { value: 0.5, source: 'source: the sharpness of full-batch training rises towards 2/η after the start (Cohen et al., ICLR 2021), so half the limit at step 0 leaves room; the factor is common practice' },
  /** Batch size against the noise scale: below B/this it scales perfectly, above B·this it wastes rows. */
  noiseBatchFactor: { value: 10, source: 'source: McCandlish et al., "An Empirical Model of Large-Batch Training", 2018 (B ≪ B_noise: linear scaling; B ≫ B_noise: diminishing returns); the factor 10 is common practice' }
} as const satisfies Record<string, Threshold>;

/** The name of a threshold. */
export type ThresholdName = keyof typeof THRESHOLDS;
