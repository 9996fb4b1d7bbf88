/** Maps each optimizer name of a recipe to its family (exhaustive over OptimizerName). */
import type { OptimizerName } from '../setup';
import { adagrad } from './adagrad';
import { cg } from './cg';
import { lbfgs } from './lbfgs';
import { minibatchLbfgs } from './minibatch-lbfgs';
import { gaussNewton, newton } from './newton';
import { adam, adamw } from './adam';
import { rmsprop } from './rmsprop';
import { sgd } from './sgd';
import type { OptimizerFamily } from './types';

/** The (init, update) family implementing optimizer `name`. */
export function familyFor(name: OptimizerName): OptimizerFamily {
  switch (name) {
    case 'sgd':
      return sgd;
    case 'adagrad':
      return adagrad;
    case 'rmsprop':
      return rmsprop;
    case 'adam':
      return adam;
    case 'adamw':
      return adamw;
    case 'lbfgs':
      return lbfgs;
    case 'cg':
      return cg;
    case 'newton':
      return newton;
    case 'gauss-newton':
      return gaussNewton;
    case 'minibatch-lbfgs':
      return minibatchLbfgs;
    default: {
      const never: never = name;
      throw new Error(`unknown optimizer '${String(never)}'`);
    }
  }
}
