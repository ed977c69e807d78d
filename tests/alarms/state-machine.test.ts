/**
 * The full state-transition table of the alarm state model. Expected outcomes follow the state
 * model of ANSI/ISA-18.2 (and IEC 62682): normal, unacknowledged, acknowledged,
 * return-to-normal unacknowledged, shelved, suppressed by design, out of service. The table below
 * is written by hand from that model, not derived from the code; the precedence
 * out-of-service > suppressed-by-design > shelved is our documented design choice.
 */
import { describe, expect, it } from "vitest";
import {
  applyAlarmAction,
  IllegalTransitionError,
  newAlarmPoint,
  type AlarmAction,
  type AlarmActionKind,
  type AlarmPoint,
} from "@/lib/domain/alarms/state-machine";
import { ConflictError, ValidationError } from "@/lib/domain/errors";
import type { AlarmState } from "@/lib/domain/types";

const T0 = Date.UTC(2026, 0, 5, 8, 0, 0);

function point(state: AlarmState, active: boolean, extra: Partial<AlarmPoint> = {}): AlarmPoint {
  const annunciatedActive = active && (state === "unacknowledged" || state === "acknowledged");
  return {
    ...newAlarmPoint("low", T0 - 1000),
    state,
    active,
    occurrenceOpen: annunciatedActive,
    activatedAt: active ? T0 - 1000 : null,
    shelvedUntil: state === "shelved" ? T0 + 3600_000 : null,
    shelveReason: state === "shelved" ? "instrument work" : null,
    suppressedReason: state === "suppressed-by-design" ? "tracker manual" : null,
    outOfServiceReason: state === "out-of-service" ? "transmitter replaced" : null,
    ...extra,
  };
}

const ACTIONS: Record<AlarmActionKind, AlarmAction> = {
  activate: { kind: "activate", priority: "low" },
  clear: { kind: "clear" },
  "set-priority": { kind: "set-priority", priority: "high" },
  suppress: { kind: "suppress", reason: "tracker stale" },
  unsuppress: { kind: "unsuppress" },
  "shelve-expired": { kind: "shelve-expired" },
  acknowledge: { kind: "acknowledge", comment: "seen" },
  shelve: { kind: "shelve", minutes: 30, reason: "valve work", maxMinutes: 60 },
  unshelve: { kind: "unshelve" },
  "remove-from-service": { kind: "remove-from-service", reason: "analyser out" },
  "return-to-service": { kind: "return-to-service" },
};

type Expect = "none" | "illegal" | { to: AlarmState; active?: boolean; announce?: boolean; occurrence?: "start" | "end" | null };

/** [state, condition active?, action, expected]. */
const TABLE: [AlarmState, boolean, AlarmActionKind, Expect][] = [
  // normal (condition inactive)
  ["normal", false, "activate", { to: "unacknowledged", active: true, announce: true, occurrence: "start" }],
  ["normal", false, "clear", "none"],
  ["normal", false, "set-priority", { to: "normal", announce: false }],
  ["normal", false, "suppress", { to: "suppressed-by-design" }],
  ["normal", false, "unsuppress", "none"],
  ["normal", false, "shelve-expired", "none"],
  ["normal", false, "acknowledge", "illegal"],
  ["normal", false, "shelve", { to: "shelved" }],
  ["normal", false, "unshelve", "illegal"],
  ["normal", false, "remove-from-service", { to: "out-of-service" }],
  ["normal", false, "return-to-service", "illegal"],
  // unacknowledged (active)
  ["unacknowledged", true, "activate", "none"],
  ["unacknowledged", true, "clear", { to: "rtn-unacknowledged", active: false, occurrence: "end" }],
  ["unacknowledged", true, "set-priority", { to: "unacknowledged", announce: true }],
  ["unacknowledged", true, "suppress", { to: "suppressed-by-design" }],
  ["unacknowledged", true, "unsuppress", "none"],
  ["unacknowledged", true, "shelve-expired", "none"],
  ["unacknowledged", true, "acknowledge", { to: "acknowledged", active: true, announce: false }],
  ["unacknowledged", true, "shelve", { to: "shelved", active: true }],
  ["unacknowledged", true, "unshelve", "illegal"],
  ["unacknowledged", true, "remove-from-service", { to: "out-of-service" }],
  ["unacknowledged", true, "return-to-service", "illegal"],
  // acknowledged (active)
  ["acknowledged", true, "activate", "none"],
  ["acknowledged", true, "clear", { to: "normal", active: false, occurrence: "end" }],
  ["acknowledged", true, "set-priority", { to: "unacknowledged", announce: true }],
  ["acknowledged", true, "suppress", { to: "suppressed-by-design" }],
  ["acknowledged", true, "unsuppress", "none"],
  ["acknowledged", true, "shelve-expired", "none"],
  ["acknowledged", true, "acknowledge", "illegal"],
  ["acknowledged", true, "shelve", { to: "shelved" }],
  ["acknowledged", true, "unshelve", "illegal"],
  ["acknowledged", true, "remove-from-service", { to: "out-of-service" }],
  ["acknowledged", true, "return-to-service", "illegal"],
  // return-to-normal unacknowledged (inactive)
  ["rtn-unacknowledged", false, "activate", { to: "unacknowledged", active: true, announce: true, occurrence: "start" }],
  ["rtn-unacknowledged", false, "clear", "none"],
  ["rtn-unacknowledged", false, "set-priority", { to: "rtn-unacknowledged", announce: false }],
  ["rtn-unacknowledged", false, "suppress", { to: "suppressed-by-design" }],
  ["rtn-unacknowledged", false, "unsuppress", "none"],
  ["rtn-unacknowledged", false, "shelve-expired", "none"],
  ["rtn-unacknowledged", false, "acknowledge", { to: "normal", active: false }],
  ["rtn-unacknowledged", false, "shelve", { to: "shelved" }],
  ["rtn-unacknowledged", false, "unshelve", "illegal"],
  ["rtn-unacknowledged", false, "remove-from-service", { to: "out-of-service" }],
  ["rtn-unacknowledged", false, "return-to-service", "illegal"],
  // shelved, condition active: activation is remembered, not announced
  ["shelved", true, "activate", "none"],
  ["shelved", true, "clear", { to: "shelved", active: false, announce: false }],
  ["shelved", true, "set-priority", { to: "shelved", announce: false }],
  ["shelved", true, "suppress", { to: "shelved" }],
  ["shelved", true, "unsuppress", "none"],
  ["shelved", true, "shelve-expired", { to: "unacknowledged", active: true, announce: true, occurrence: "start" }],
  ["shelved", true, "acknowledge", "illegal"],
  ["shelved", true, "shelve", "illegal"],
  ["shelved", true, "unshelve", { to: "unacknowledged", active: true, announce: true, occurrence: "start" }],
  ["shelved", true, "remove-from-service", { to: "out-of-service" }],
  ["shelved", true, "return-to-service", "illegal"],
  // shelved, condition inactive
  ["shelved", false, "activate", { to: "shelved", active: true, announce: false, occurrence: null }],
  ["shelved", false, "clear", "none"],
  ["shelved", false, "shelve-expired", { to: "normal", active: false, announce: false }],
  ["shelved", false, "unshelve", { to: "normal", active: false, announce: false }],
  // suppressed by design
  ["suppressed-by-design", true, "activate", "none"],
  ["suppressed-by-design", true, "clear", { to: "suppressed-by-design", active: false, announce: false }],
  ["suppressed-by-design", true, "set-priority", { to: "suppressed-by-design", announce: false }],
  ["suppressed-by-design", true, "suppress", { to: "suppressed-by-design", announce: false }],
  ["suppressed-by-design", true, "unsuppress", { to: "unacknowledged", announce: true, occurrence: "start" }],
  ["suppressed-by-design", false, "unsuppress", { to: "normal", announce: false }],
  ["suppressed-by-design", false, "activate", { to: "suppressed-by-design", active: true, announce: false, occurrence: null }],
  ["suppressed-by-design", true, "shelve-expired", "none"],
  ["suppressed-by-design", true, "acknowledge", "illegal"],
  ["suppressed-by-design", true, "shelve", "illegal"],
  ["suppressed-by-design", true, "unshelve", "illegal"],
  ["suppressed-by-design", true, "remove-from-service", { to: "out-of-service" }],
  ["suppressed-by-design", true, "return-to-service", "illegal"],
  // out of service
  ["out-of-service", true, "activate", "none"],
  ["out-of-service", true, "clear", { to: "out-of-service", active: false, announce: false }],
  ["out-of-service", false, "activate", { to: "out-of-service", active: true, announce: false, occurrence: null }],
  ["out-of-service", true, "set-priority", { to: "out-of-service", announce: false }],
  ["out-of-service", true, "suppress", { to: "out-of-service" }],
  ["out-of-service", true, "unsuppress", "none"],
  ["out-of-service", true, "shelve-expired", "none"],
  ["out-of-service", true, "acknowledge", "illegal"],
  ["out-of-service", true, "shelve", "illegal"],
  ["out-of-service", true, "unshelve", "illegal"],
  ["out-of-service", true, "remove-from-service", "illegal"],
  ["out-of-service", true, "return-to-service", { to: "unacknowledged", announce: true, occurrence: "start" }],
  ["out-of-service", false, "return-to-service", { to: "normal", announce: false }],
];

describe("alarm state model (ANSI/ISA-18.2, IEC 62682)", () => {
  it("covers every state and every action at least once", () => {
    const seen = new Set(TABLE.map(([s, , a]) => `${s}|${a}`));
    const states: AlarmState[] = ["normal", "unacknowledged", "acknowledged", "rtn-unacknowledged", "shelved", "suppressed-by-design", "out-of-service"];
    for (const s of states) for (const a of Object.keys(ACTIONS)) expect(seen.has(`${s}|${a}`), `${s} x ${a}`).toBe(true);
  });

  it.each(TABLE)("from %s (active %s), %s gives %j", (state, active, kind, expected) => {
    const p = point(state, active);
    const run = () => applyAlarmAction(p, ACTIONS[kind], T0);
    if (expected === "illegal") {
      expect(run).toThrow(IllegalTransitionError);
      expect(run).toThrow(ConflictError);
      return;
    }
    const r = run();
    if (expected === "none") {
      expect(r).toBeNull();
      return;
    }
    expect(r).not.toBeNull();
    expect(r!.from).toBe(state);
    expect(r!.to).toBe(expected.to);
    expect(r!.point.state).toBe(expected.to);
    expect(r!.point.changedAt).toBe(T0);
    if (expected.active !== undefined) expect(r!.point.active).toBe(expected.active);
    if (expected.announce !== undefined) expect(r!.announce).toBe(expected.announce);
    if (expected.occurrence !== undefined) expect(r!.occurrence).toBe(expected.occurrence);
  });

  it("an illegal transition names the action and the state in its message", () => {
    expect(() => applyAlarmAction(point("normal", false), ACTIONS.acknowledge, T0)).toThrow(
      /Cannot acknowledge an alarm that is normal: there is nothing to acknowledge/,
    );
    expect(() => applyAlarmAction(point("shelved", true), ACTIONS.shelve, T0)).toThrow(/already shelved/);
  });

  it("acknowledging an urgent alarm requires a comment (422); a low one does not", () => {
    const urgent = point("unacknowledged", true, { priority: "urgent" });
    expect(() => applyAlarmAction(urgent, { kind: "acknowledge", comment: "  " }, T0)).toThrow(ValidationError);
    expect(() => applyAlarmAction(urgent, { kind: "acknowledge", comment: null }, T0)).toThrow(/comment/);
    expect(applyAlarmAction(urgent, { kind: "acknowledge", comment: "operator called field" }, T0)?.to).toBe("acknowledged");
    expect(applyAlarmAction(point("unacknowledged", true), { kind: "acknowledge", comment: null }, T0)?.to).toBe("acknowledged");
  });

  it("shelving needs a reason and respects the policy's maximum duration", () => {
    const p = point("unacknowledged", true);
    expect(() => applyAlarmAction(p, { kind: "shelve", minutes: 30, reason: "", maxMinutes: 60 }, T0)).toThrow(ValidationError);
    expect(() => applyAlarmAction(p, { kind: "shelve", minutes: 61, reason: "work", maxMinutes: 60 }, T0)).toThrow(/at most 60 minutes/);
    expect(() => applyAlarmAction(p, { kind: "shelve", minutes: 0, reason: "work", maxMinutes: 60 }, T0)).toThrow(ValidationError);
    const r = applyAlarmAction(p, { kind: "shelve", minutes: 45, reason: "work", maxMinutes: 60 }, T0);
    expect(r?.point.shelvedUntil).toBe(T0 + 45 * 60_000);
    expect(r?.point.shelveReason).toBe("work");
  });

  it("taking out of service requires a reason", () => {
    expect(() => applyAlarmAction(point("normal", false), { kind: "remove-from-service", reason: " " }, T0)).toThrow(ValidationError);
  });

  it("a suppression that arrives while shelved takes effect when the shelve expires", () => {
    let p = point("shelved", true);
    p = applyAlarmAction(p, { kind: "suppress", reason: "tracker manual" }, T0)!.point;
    expect(p.state).toBe("shelved");
    const r = applyAlarmAction(p, { kind: "shelve-expired" }, T0 + 1)!;
    expect(r.to).toBe("suppressed-by-design");
    expect(r.announce).toBe(false);
  });

  it("a lower priority on an acknowledged alarm does not re-announce it", () => {
    const p = point("acknowledged", true, { priority: "high" });
    const r = applyAlarmAction(p, { kind: "set-priority", priority: "low" }, T0)!;
    expect(r.to).toBe("acknowledged");
    expect(r.announce).toBe(false);
    expect(r.point.priority).toBe("low");
  });

  it("one activation is one occurrence through a full cycle: activate, acknowledge, clear", () => {
    let p = newAlarmPoint("low", T0);
    const occ: (string | null)[] = [];
    for (const [a, t] of [
      [ACTIONS.activate, T0 + 1],
      [ACTIONS.acknowledge, T0 + 2],
      [ACTIONS.clear, T0 + 3],
    ] as const) {
      const r = applyAlarmAction(p, a, t)!;
      occ.push(r.occurrence);
      p = r.point;
    }
    expect(occ).toEqual(["start", null, "end"]);
    expect(p.state).toBe("normal");
    expect(p.occurrenceOpen).toBe(false);
  });
});
