import { RigCalError, EXIT_FAILED } from '../errors.js';

/** Stable codes of the pose solver's errors. */
export type PnpErrorCode =
  | 'pnp.too_few_points'
  | 'pnp.size_mismatch'
  | 'pnp.collinear'
  | 'pnp.non_finite'
  | 'pnp.behind_camera'
  | 'pnp.unprojectable'
  | 'pnp.no_solution'
  | 'pnp.poor_fit';

/**
 * A single-view pose could not be determined trustworthily. The solver throws
 * this instead of returning a pose it cannot vouch for (exit code 1).
 */
export class PnpError extends RigCalError {
  declare readonly code: PnpErrorCode;
  constructor(code: PnpErrorCode, message: string) {
    super(code, message, EXIT_FAILED);
    this.name = 'PnpError';
  }
}
