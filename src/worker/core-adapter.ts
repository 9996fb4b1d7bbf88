/**
 * The one file that maps the engine host's {@link EngineCore} onto the real modules:
 * `spec/` for parsing, `core/session` for stepping, `core/probe/gradcheck` for the audit.
 */
import type { Experiment } from '../core/setup';
import type { SessionState, StepRecord } from '../core/state';
import { Session } from '../core/session';
import { Rng } from '../core/rng';
import { auditGradient } from '../core/probe/gradcheck';
import { measureSessionCurvature } from '../core/probe/curvature';
import { parseSpec } from '../spec';
import type { EngineCore, EngineSession, ParseOutcome } from './engine-core';
import type { CurvatureResult, SharpnessPoint } from './protocol';

/** An {@link EngineSession} over a real {@link Session}. */
class SessionAdapter implements EngineSession {
  /** The wrapped session (the audit reads its objective). */
  readonly session: Session;

  constructor(session: Session) {
    this.session = session;
  }

  get stepCount(): number {
    return this.session.stepCount;
  }

  get parameterCount(): number {
    return this.session.objective.parameterCount;
  }

  get parameters(): Float64Array {
    return this.session.parameters;
  }

  stepOnce(): StepRecord {
    return this.session.step(1)[0];
  }

  initialRecord(): StepRecord {
    return this.session.initialRecord();
  }

  state(): SessionState {
    return this.session.state();
  }

  fingerprint(): string {
    return this.session.fingerprint();
  }
}

/** The real numerics behind the engine host. */
export const realCore: EngineCore = {
  parse(specText: string): ParseOutcome {
    return parseSpec(specText);
  },
  create(experiment: Experiment): EngineSession {
    return new SessionAdapter(Session.create(experiment));
  },
  restore(experiment: Experiment, state: SessionState): EngineSession {
    return new SessionAdapter(Session.restore(experiment, state));
  },
  audit(experiment, session, sample) {
    if (!(session instanceof SessionAdapter)) throw new Error('the audit needs a session made by this core');
    // The subset is drawn from the seed and the step, so an audit is itself reproducible.
    const rng = Rng.fromSeed(experiment.seed).fork(`audit-${session.stepCount}`);
    return auditGradient(session.session.objective, session.parameters, { sample, rng });
  },
  curvature(experiment, session, k, denseLimit): CurvatureResult {
    if (!(session instanceof SessionAdapter)) throw new Error('the curvature readout needs a session made by this core');
    const rng = Rng.fromSeed(experiment.seed).fork(`curvature-${session.stepCount}`);
    const { spectrum, summary } = measureSessionCurvature(session.session, rng, { k, denseLimit });
    return {
      step: session.stepCount,
      method: spectrum.method,
      parameterCount: spectrum.parameterCount,
      top: [...spectrum.top],
      topBounds: [...spectrum.topBounds],
      bottom: [...spectrum.bottom],
      bottomBounds: [...spectrum.bottomBounds],
      products: spectrum.products,
      stop: spectrum.stop,
      summary
    };
  },
  sharpness(experiment, session): SharpnessPoint {
    if (!(session instanceof SessionAdapter)) throw new Error('the sharpness trace needs a session made by this core');
    const rng = Rng.fromSeed(experiment.seed).fork(`sharpness-${session.stepCount}`);
    const { summary } = measureSessionCurvature(session.session, rng, { method: 'lanczos', k: 1, density: false, traceProbes: 0, maxIterations: 80 });
    const st = summary.stability;
    return {
      step: session.stepCount,
      lambdaMax: summary.lambdaMax,
      sharpness: st.sharpness,
      limit: st.factor === null || !(st.lr > 0) ? null : st.factor / st.lr,
      preconditioned: st.preconditioned
    };
  }
};
