/**
 * The text a new stepwell cell starts with: a small, working regression experiment
 * (an invented scenario) whose comments explain each key. Its first line is the
 * `%%stepwell` magic line, so a Python kernel that runs the cell prints a notice
 * instead of failing on YAML.
 */

/** YAML of the starting experiment; parses without errors or warnings. */
export const TEMPLATE_SPEC = `%%stepwell
# A stepwell experiment: one small model, its data, a loss and an optimizer recipe.
# Step it one update at a time and read curvature, layer balance and gradient checks.
# What a small model shows here is evidence about this model, not a guarantee at scale.
seed: 7                     # every random draw (initial weights, batch order) derives from it
model:
  inputs: 3                 # width of every data.x row
  layers:                   # dense layers in order; the last one's units = target columns
    - { units: 5, activation: tanh }
    - { units: 1, activation: linear }
  init: lecun-normal        # lecun-normal | lecun-uniform | glorot-normal | glorot-uniform | he-normal | he-uniform | orthogonal
  gain: 1                   # multiplies the scheme's standard deviation
data:
  # Invented scenario: moisture left in a batch after drying (scaled), from
  # oven temperature, fan speed and load size (each scaled to about -1..1).
  x:
    - [-0.52,  0.09, -0.26]
    - [-0.87, -0.97,  0.67]
    - [-0.48, -0.53,  0.99]
    - [-0.05,  0.28, -0.70]
    - [ 0.27,  0.74,  0.05]
    - [-0.87,  0.52,  0.18]
    - [-0.40, -0.94,  0.73]
    - [ 0.76,  0.43,  0.84]
  y: [0.441, 1.045, 0.870, -0.004, 0.002, 0.585, 0.892, 0.348]   # one target per row
loss: mse                   # mse | cross-entropy (class indices) | binary-cross-entropy (0/1 targets)
regularization: { l2: 0 }   # adds ½·l2·Σ‖W‖² over weight matrices (not biases)
recipe:
  optimizer: sgd            # sgd | adagrad | rmsprop | adam | adamw | lbfgs | cg | newton | gauss-newton | minibatch-lbfgs
  lr: 0.1                   # learning rate η
  momentum: 0               # momentum μ (sgd heavy ball, rmsprop)
  batch: full               # full, or rows per mini-batch
  schedule: { kind: constant }   # constant | step | exponential | inverse-time | cosine
`;
