/**
 * Initialization check: per-layer forward statistics at step 0 on the experiment's own data for
 * the chosen scheme and gain, beside what each alternative scheme would give, and every layer's
 * weight spread against the fan-in rule for its activation.
 *
 * Fan-in rules (standard deviation of one weight, before any gain):
 * | activation | rule | source |
 * | --- | --- | --- |
 * | linear, tanh, sigmoid, softplus | √(1/fan_in) | LeCun et al., "Efficient BackProp", 1998 |
 * | relu, elu, gelu | √(2/fan_in) | He et al., ICCV 2015 (derived for ReLU; used for its smooth relatives by common practice) |
 * | leaky-relu (slope s = 0.01) | √(2/((1 + s²)·fan_in)) | He et al., ICCV 2015 (PReLU form) |
 * Glorot & Bengio (AISTATS 2010) average fan-in and fan-out, 2/(fan_in + fan_out); it appears as
 * an alternative, not as a rule.
 *
 * The chosen scheme's weights are the session's own (fork `init` of the seed, or the explicit
 * `model.weights`); the alternatives are drawn from fork `init-check` of the seed, one sub-fork
 * per scheme, so the check never shifts any other stream. A scheme's nominal spread is exact
 * (gain × √variance; orthogonal: gain × √(min(in, out)/(in·out)), the RMS of a matrix with
 * orthonormal rows or columns); explicit weights are measured (root mean square).
 */
import type { ActivationName, InitScheme, NetworkModel, Setup } from '../setup';
import { Rng } from '../rng';
import { Network, networkBlocks } from '../model/network';
import { initNetwork, initVariance } from '../model/init';
import { LEAKY_SLOPE } from '../model/activations';
import { activationHealth, type ActivationHealth } from './activation-health';

/** Which fan-in rule applies to an activation. */
export type FanInRule = 'lecun' | 'he' | 'he-leaky';

/** The fan-in rule of an activation (see the module table). */
export function fanInRule(activation: ActivationName): FanInRule {
  switch (activation) {
    case 'linear':
    case 'tanh':
    case 'sigmoid':
    case 'softplus':
    case 'expression': // the user's function: the variance-preserving rule for a unit of unit slope
      return 'lecun';
    case 'relu':
    case 'elu':
    case 'gelu':
      return 'he';
    case 'leaky-relu':
      return 'he-leaky';
    default: {
      const never: never = activation;
      throw new Error(`unknown activation '${String(never)}'`);
    }
  }
}

/** The standard deviation the fan-in rule asks for (see the module table). */
export function fanInRuleSpread(activation: ActivationName, fanIn: number): number {
  const rule = fanInRule(activation);
  switch (rule) {
    case 'lecun':
      return Math.sqrt(1 / fanIn);
    case 'he':
      return Math.sqrt(2 / fanIn);
    case 'he-leaky':
      return Math.sqrt(2 / ((1 + LEAKY_SLOPE * LEAKY_SLOPE) * fanIn));
    default: {
      const never: never = rule;
      throw new Error(`unknown rule '${String(never)}'`);
    }
  }
}

/** The scheme whose variance is the fan-in rule of an activation (what a proposal sets). */
export function ruleScheme(activation: ActivationName): InitScheme {
  return fanInRule(activation) === 'lecun' ? 'lecun-normal' : 'he-normal';
}

/** Nominal weight spread of a scheme with a gain (exact; see the module comment). */
export function schemeSpread(scheme: InitScheme, gain: number, fanIn: number, fanOut: number): number {
  if (scheme === 'orthogonal') return gain * Math.sqrt(Math.min(fanIn, fanOut) / (fanIn * fanOut));
  return gain * Math.sqrt(initVariance(scheme, fanIn, fanOut));
}

/** One layer under one candidate initialization. */
export interface InitLayerStats {
  layer: number;
  activation: ActivationName;
  fanIn: number;
  fanOut: number;
  /** The weight spread: nominal for a scheme, measured (RMS) for explicit weights. */
  weightSpread: number;
  /** Whether `weightSpread` was measured from explicit weights. */
  measured: boolean;
  /** The fan-in rule's spread for this layer's activation, and the rule's name. */
  ruleSpread: number;
  rule: FanInRule;
  /** weightSpread / ruleSpread. */
  ratio: number;
  /** Whether `ratio` is off the rule by more than {@link INIT_RULE_FACTOR} either way ({@link offFanInRule}). */
  offRule: boolean;
  /** Forward statistics at step 0 on all training rows. */
  preMean: number;
  preSpread: number;
  saturatedShare: number | null;
  deadShare: number | null;
}

/**
 * How far a layer's weight spread may sit from its fan-in rule, either way, before the check
 * marks it: 2×, i.e. the variance of the signal scales by 4× per layer.
 * common practice (no single source): a factor of 2 in spread is where the per-layer
 * variance drift of LeCun 1998 / He 2015 compounds visibly within a few layers.
 */
export const INIT_RULE_FACTOR = 2;

/** Whether a spread ratio (weight spread ÷ the rule's) lies off the fan-in rule: above {@link INIT_RULE_FACTOR} or below its inverse. */
export function offFanInRule(ratio: number): boolean {
  return !(ratio <= INIT_RULE_FACTOR && ratio >= 1 / INIT_RULE_FACTOR);
}

/** One candidate initialization. */
export interface InitCandidate {
  /** The scheme, or `explicit` for `model.weights`. */
  scheme: InitScheme | 'explicit';
  gain: number;
  /** True for the experiment's own initialization. */
  chosen: boolean;
  layers: InitLayerStats[];
}

/** Result of {@link initCheck}. */
export interface InitCheck {
  rows: number;
  chosen: InitCandidate;
  /** lecun-normal, glorot-normal and he-normal at gain 1. */
  alternatives: InitCandidate[];
  /** The chosen candidate's full activation health at step 0 (histograms included). */
  health: ActivationHealth;
}

/** The alternatives drawn beside the chosen scheme. */
export const ALTERNATIVE_SCHEMES: readonly InitScheme[] = ['lecun-normal', 'glorot-normal', 'he-normal'];

function candidate(net: Network, model: NetworkModel, w: Float64Array, scheme: InitScheme | 'explicit', gain: number, chosen: boolean): { c: InitCandidate; health: ActivationHealth } {
  const blocks = networkBlocks(model.inputs, model.layers.map((l) => l.units));
  const health = activationHealth(net, model, w, 0);
  const layers = model.layers.map((layer, l): InitLayerStats => {
    const wb = blocks[2 * l];
    const [fanOut, fanIn] = wb.shape;
    let spread: number;
    if (scheme === 'explicit') {
      let s = 0;
      for (let i = 0; i < wb.size; i++) s += w[wb.offset + i] * w[wb.offset + i];
      spread = Math.sqrt(s / wb.size);
    } else spread = schemeSpread(scheme, gain, fanIn, fanOut);
    const ruleSpread = fanInRuleSpread(layer.activation, fanIn);
    const h = health.layers[l];
    return {
      layer: l, activation: layer.activation, fanIn, fanOut, weightSpread: spread, measured: scheme === 'explicit',
      ruleSpread, rule: fanInRule(layer.activation), ratio: spread / ruleSpread, offRule: offFanInRule(spread / ruleSpread),
      preMean: h.preMean, preSpread: h.preSpread, saturatedShare: h.saturatedShare, deadShare: h.deadShare,
    };
  });
  return { c: { scheme, gain, chosen, layers }, health };
}

/**
 * The initialization check of a network setup for `seed` (null for analytic objectives).
 * Costs one forward pass over the training rows per candidate (four in all).
 */
export function initCheck(setup: Setup, seed: number): InitCheck | null {
  const model = setup.model;
  if (model.kind !== 'network' || setup.data === undefined) return null;
  const net = new Network(model, setup.data, setup.loss, setup.l2, { lossExpression: setup.lossExpression });
  const w0 = initNetwork(model, Rng.fromSeed(seed).fork('init'));
  const explicit = model.weights !== undefined;
  const own = candidate(net, model, w0, explicit ? 'explicit' : model.init, model.gain, true);
  const base = Rng.fromSeed(seed).fork('init-check');
  const alternatives = ALTERNATIVE_SCHEMES.map((scheme) => {
    const alt: NetworkModel = { kind: 'network', inputs: model.inputs, layers: model.layers, init: scheme, gain: 1 };
    return candidate(net, model, initNetwork(alt, base.fork(scheme)), scheme, 1, false).c;
  });
  return { rows: setup.data.rows, chosen: own.c, alternatives, health: own.health };
}
