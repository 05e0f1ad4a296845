import { EXIT_FAILED, RigCalError } from '../errors.js';

/** The solve ran but could not produce a trustworthy rig (exit code 1). */
export class RigSolveError extends RigCalError {
  constructor(code: string, message: string) {
    super(code, message, EXIT_FAILED);
    this.name = 'RigSolveError';
  }
}
