/**
 * Activation functions, each declared once with f, f′ and f″ (STYLE.md: one table, one
 * rule each). Forward, backward and the R-operator in `network.ts` are generic over it.
 *
 * Each entry evaluates a whole pre-activation slice in one loop, writing f, f′ and
 * (when asked) f″, so a layer costs one pass and no per-element dispatch.
 */
import * as elementary from '../elementary';
import type { ActivationName, ActivationParams, LayerSetup } from '../setup';
import { expressionActivation } from './expression';

// Bound once: in CommonJS builds (jest, tsx) an imported binding is a getter reached on every call.
const { erf, exp, expm1, sigmoid: sigmoidFn, softplus: softplusFn, tanh: tanhFn } = elementary;

/** Vectorized activation: writes f(a), f′(a) and optionally f″(a) for a[0..n). */
export interface Activation {
  readonly name: ActivationName;
  /** True when f is the identity (f′ = 1, f″ = 0), so callers can skip multiplies. */
  readonly identity: boolean;
  /** True when f″ ≡ 0 everywhere it is defined (piecewise-linear units). */
  readonly piecewiseLinear: boolean;
  evaluate(a: Float64Array, f: Float64Array, d1: Float64Array, d2: Float64Array | null, n: number): void;
}

/** Negative-side slope of `leaky-relu` (PyTorch's default negative_slope). */
export const LEAKY_SLOPE = 0.01;

/** PyTorch's defaults for the parametrized activations (torch.nn.LeakyReLU, ELU, Softplus). */
export const ACTIVATION_DEFAULTS: Readonly<ActivationParams> = { slope: LEAKY_SLOPE, alpha: 1, beta: 1, threshold: 20 };
const INV_SQRT2 = Math.SQRT1_2;
const INV_SQRT_2PI = 1 / Math.sqrt(2 * Math.PI);

/** Logistic function 1/(1+e^−x) without overflow for either sign (core's engine-independent sigmoid). */
export const logistic: (x: number) => number = sigmoidFn;

const linear: Activation = {
  name: 'linear', identity: true, piecewiseLinear: true,
  evaluate(a, f, d1, d2, n) {
    for (let i = 0; i < n; i++) { f[i] = a[i]; d1[i] = 1; }
    if (d2) d2.fill(0, 0, n);
  },
};

const tanh: Activation = {
  // f = tanh a, f′ = 1 − f², f″ = −2 f f′
  name: 'tanh', identity: false, piecewiseLinear: false,
  evaluate(a, f, d1, d2, n) {
    for (let i = 0; i < n; i++) {
      const t = tanhFn(a[i]);
      const g = 1 - t * t;
      f[i] = t; d1[i] = g;
      if (d2) d2[i] = -2 * t * g;
    }
  },
};

const sigmoid: Activation = {
  // f = σ(a), f′ = σ(1 − σ), f″ = f′ (1 − 2σ)
  name: 'sigmoid', identity: false, piecewiseLinear: false,
  evaluate(a, f, d1, d2, n) {
    for (let i = 0; i < n; i++) {
      const s = logistic(a[i]);
      const g = s * (1 - s);
      f[i] = s; d1[i] = g;
      if (d2) d2[i] = g * (1 - 2 * s);
    }
  },
};

const relu: Activation = {
  // f = max(0, a); f′(0) = 0 as in PyTorch; f″ = 0
  name: 'relu', identity: false, piecewiseLinear: true,
  evaluate(a, f, d1, d2, n) {
    for (let i = 0; i < n; i++) {
      const x = a[i];
      if (x > 0) { f[i] = x; d1[i] = 1; } else { f[i] = 0; d1[i] = 0; }
    }
    if (d2) d2.fill(0, 0, n);
  },
};

/** Leaky ReLU with negative slope k (torch.nn.LeakyReLU): f = a for a > 0, k·a otherwise; f″ = 0. */
function leakyRelu(k: number): Activation {
  return {
    name: 'leaky-relu', identity: false, piecewiseLinear: true,
    evaluate(a, f, d1, d2, n) {
      for (let i = 0; i < n; i++) {
        const x = a[i];
        if (x > 0) { f[i] = x; d1[i] = 1; } else { f[i] = k * x; d1[i] = k; }
      }
      if (d2) d2.fill(0, 0, n);
    },
  };
}

/**
 * Softplus with β and threshold τ, as torch.nn.Softplus: f = log(1 + e^{βa})/β, computed as
 * (max(βa, 0) + log1p(e^−|βa|))/β, f′ = σ(βa), f″ = β·σ(1 − σ); where βa > τ, f = a (f′ = 1, f″ = 0).
 */
function softplus(beta: number, threshold: number): Activation {
  return {
    name: 'softplus', identity: false, piecewiseLinear: false,
    evaluate(a, f, d1, d2, n) {
      for (let i = 0; i < n; i++) {
        const x = a[i];
        const z = beta * x;
        if (z > threshold) { f[i] = x; d1[i] = 1; if (d2) d2[i] = 0; continue; }
        const s = logistic(z);
        f[i] = softplusFn(z) / beta; // max(z, 0) + log1p(e^−|z|), core/elementary
        d1[i] = s;
        if (d2) d2[i] = beta * s * (1 - s);
      }
    },
  };
}

/** ELU with α (torch.nn.ELU): f = a (a > 0) or α(e^a − 1); f′ = 1 or α·e^a; f″ = 0 or α·e^a. */
function elu(alpha: number): Activation {
  return {
    name: 'elu', identity: false, piecewiseLinear: false,
    evaluate(a, f, d1, d2, n) {
      for (let i = 0; i < n; i++) {
        const x = a[i];
        if (x > 0) { f[i] = x; d1[i] = 1; if (d2) d2[i] = 0; } else {
          const e = alpha * exp(x);
          f[i] = alpha * expm1(x); d1[i] = e; if (d2) d2[i] = e;
        }
      }
    },
  };
}

const gelu: Activation = {
  // Exact (erf) form, PyTorch's default: f = a Φ(a), f′ = Φ + a φ, f″ = φ (2 − a²)
  name: 'gelu', identity: false, piecewiseLinear: false,
  evaluate(a, f, d1, d2, n) {
    for (let i = 0; i < n; i++) {
      const x = a[i];
      const cdf = 0.5 * (1 + erf(x * INV_SQRT2));
      const pdf = INV_SQRT_2PI * exp(-0.5 * x * x);
      f[i] = x * cdf;
      d1[i] = cdf + x * pdf;
      if (d2) d2[i] = pdf * (2 - x * x);
    }
  },
};

/**
 * Returns the activation for a name; exhaustive over {@link ActivationName}. `params` set the
 * slope of leaky-relu, α of elu, β and threshold of softplus (PyTorch's defaults otherwise).
 */
export function activation(name: ActivationName, params: Partial<ActivationParams> = {}): Activation {
  const p = { ...ACTIVATION_DEFAULTS, ...params };
  switch (name) {
    case 'linear': return linear;
    case 'tanh': return tanh;
    case 'sigmoid': return sigmoid;
    case 'relu': return relu;
    case 'leaky-relu': return leakyRelu(p.slope);
    case 'softplus': return softplus(p.beta, p.threshold);
    case 'elu': return elu(p.alpha);
    case 'gelu': return gelu;
    case 'expression': throw new Error('an expression activation needs its layer: use layerActivation(layer)');
    default: {
      const never: never = name;
      throw new Error(`unknown activation '${String(never)}'`);
    }
  }
}

/** The activation of a layer: its expression when it has one, else the named activation. */
export function layerActivation(layer: LayerSetup): Activation {
  if (layer.activation === 'expression') {
    if (!layer.expression) throw new Error('a layer with activation expression needs its expression (the spec parser sets it)');
    return expressionActivation(layer.expression);
  }
  return activation(layer.activation, layer.params);
}

/** Every built-in activation name, for table-driven tests and schema checks (`expression` is the user's own). */
export const ACTIVATIONS: readonly ActivationName[] = ['linear', 'tanh', 'sigmoid', 'relu', 'leaky-relu', 'softplus', 'elu', 'gelu'];
