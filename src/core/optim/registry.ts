/** Maps each optimizer name of a recipe to its family (exhaustive over OptimizerName). */
import type { OptimizerName } from '../setup';
import { adagrad } from './adagrad';
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
    case 'cg':
    case 'newton':
    case 'gauss-newton':
    case 'minibatch-lbfgs':
      throw new Error(`optimizer '${name}' is not implemented yet`);
    default: {
      const never: never = name;
      throw new Error(`unknown optimizer '${String(never)}'`);
    }
  }
}
