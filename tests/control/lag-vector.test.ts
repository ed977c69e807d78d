import { describe, expect, it } from "vitest";
import { shiftIn } from "@/lib/control/lag-vector";

// A lag vector holds y(k-1), y(k-2), ... newest first: the regressor order of an ARX model
// (Ljung 1999 sec. 4.2, phi(t) = [-y(t-1) ... -y(t-na) u(t-1) ... u(t-nb)]').
describe("shiftIn", () => {
  it("moves every value one lag older, drops the oldest and stores the new one at lag 0", () => {
    const v = Float64Array.from([3, 2, 1]);
    shiftIn(v, 4);
    expect(Array.from(v)).toEqual([4, 3, 2]);
    shiftIn(v, 5);
    expect(Array.from(v)).toEqual([5, 4, 3]);
  });

  it("keeps a one-element vector as the last value and leaves an empty one empty", () => {
    const one = new Float64Array(1);
    shiftIn(one, 7);
    expect(Array.from(one)).toEqual([7]);
    const none = new Float64Array(0);
    shiftIn(none, 7);
    expect(none.length).toBe(0);
  });
});
