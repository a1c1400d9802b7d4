/**
 * The caution every report and transport result carries: simulated properties are only as good
 * as the model that produced the trajectory.
 */
export const CAUTION =
  'Caution: every property here is computed from a simulation and inherits the error of its force field, ' +
  'system size and run length. Check it against experiment and licensed engineering practice before it ' +
  'informs a design or safety decision.';
