/**
 * A cycle that persists while the loop is in manual comes from outside the loop: with the output
 * held, neither the controller's tuning nor a sticking valve can drive PV (Hägglund, "A
 * control-loop performance monitor", Control Eng. Practice 3, 1995, makes this argument; the
 * issue's own list of stiction test failures names it). Checked on PV of each manual stretch of
 * at least three periods (`oscillatesAt`: ACF above 0.3 near one period, below −0.2 near half).
 */
import { oscillatesAt } from "./oscillation";
import { isClosed, type AssessWindow } from "./window";

/** True when PV oscillates at `periodSamples` in some manual stretch of three periods or more; null when no such stretch exists. */
export function persistsInManual(w: AssessWindow, periodSamples: number): boolean | null {
  let found: boolean | null = null;
  let s = -1;
  for (let i = 0; i <= w.n; i++) {
    const man = i < w.n && w.good[i] && !isClosed(w, i);
    if (man && s < 0) s = i;
    else if (!man && s >= 0) {
      if (i - s >= 3 * periodSamples) found = (found ?? false) || oscillatesAt(w.pvPct, s, i, periodSamples);
      s = -1;
    }
  }
  return found;
}
