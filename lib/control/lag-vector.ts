/**
 * Lag vectors: the past values of a signal kept newest first (`vec[0]` is one sample ago), as the
 * ARX regressors, the instrument histories and the controller difference equations read them.
 */

/** Shifts `vec` one place towards older lags (the oldest value drops out) and stores `value` at lag 0. */
export function shiftIn(vec: Float64Array, value: number): void {
  const n = vec.length;
  if (n === 0) return;
  vec.copyWithin(1, 0, n - 1);
  vec[0] = value;
}
