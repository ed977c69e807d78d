/**
 * Lag vectors (histories newest first) for the recursive estimators: one place for the
 * "shift everything one lag older, put the new value in front" step.
 */

/** Shifts `lags` one position older (the oldest value drops out) and stores `value` at index 0. In place, no allocation. */
export function shiftIn(lags: Float64Array, value: number): void {
  if (lags.length === 0) return;
  lags.copyWithin(1, 0, lags.length - 1);
  lags[0] = value;
}
