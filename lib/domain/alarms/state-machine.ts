/**
 * The alarm state model of ANSI/ISA-18.2 and IEC 62682 as a pure transition function.
 *
 * An alarm point keeps one state; the condition behind it (`active`) is tracked apart from the
 * state, because an alarm can be acknowledged while still active, or shelved while active.
 *
 *   normal ──activate──▶ unacknowledged ──acknowledge──▶ acknowledged ──clear──▶ normal
 *                          │ clear                                    ▲
 *                          ▼                                          │ acknowledge
 *                    rtn-unacknowledged ──────────────────────────────┘ (to normal)
 *
 * plus shelved (operator, time-limited, reason), suppressed-by-design (system: a tracker state or
 * a root-cause alarm on the same loop) and out-of-service (engineer, reason).
 *
 * Two kinds of action: system actions (activate, clear, set-priority, suppress, unsuppress,
 * shelve-expired) never fail: when they do not apply they return `null` (nothing changes).
 * Person actions (acknowledge, shelve, unshelve, remove-from-service, return-to-service) that do
 * not apply throw `IllegalTransitionError` (HTTP 409) with a message that names the state.
 *
 * Precedence (our design, documented): out-of-service > suppressed-by-design > shelved. A
 * suppression that arrives while shelved or out of service is remembered (`suppressedReason`)
 * and takes effect when the shelve or the out-of-service ends.
 */
import { ConflictError, ValidationError } from "@/lib/domain/errors";
import type { AlarmPriority, AlarmState } from "@/lib/domain/types";

export const PRIORITY_RANK: Record<AlarmPriority, number> = { low: 1, high: 2, urgent: 3 };

/** The stored state of one alarm point. Times are epoch ms. */
export interface AlarmPoint {
  state: AlarmState;
  active: boolean;
  priority: AlarmPriority;
  shelvedUntil: number | null;
  shelveReason: string | null;
  suppressedReason: string | null;
  outOfServiceReason: string | null;
  /** Start of the current activation (the open occurrence), or null. */
  activatedAt: number | null;
  /** True while an occurrence (an annunciated activation, for the KPIs) is open. */
  occurrenceOpen: boolean;
  changedAt: number;
}

export type AlarmAction =
  | { kind: "activate"; priority: AlarmPriority }
  | { kind: "clear" }
  | { kind: "set-priority"; priority: AlarmPriority }
  | { kind: "suppress"; reason: string }
  | { kind: "unsuppress" }
  | { kind: "shelve-expired" }
  | { kind: "acknowledge"; comment: string | null }
  | { kind: "shelve"; minutes: number; reason: string; maxMinutes: number }
  | { kind: "unshelve" }
  | { kind: "remove-from-service"; reason: string }
  | { kind: "return-to-service" };

export type AlarmActionKind = AlarmAction["kind"];

export const SYSTEM_ACTIONS = ["activate", "clear", "set-priority", "suppress", "unsuppress", "shelve-expired"] as const;
export const PERSON_ACTIONS = ["acknowledge", "shelve", "unshelve", "remove-from-service", "return-to-service"] as const;

export interface TransitionResult {
  point: AlarmPoint;
  from: AlarmState;
  to: AlarmState;
  /** Put in front of the operator (a new or re-announced alarm): notify, blink. */
  announce: boolean;
  /** Occurrence bookkeeping for the KPIs. */
  occurrence: "start" | "end" | null;
}

/** 409: the action does not apply to the alarm's current state. */
export class IllegalTransitionError extends ConflictError {
  constructor(
    readonly action: AlarmActionKind,
    readonly state: AlarmState,
    reason: string,
  ) {
    super(`Cannot ${action.replace(/-/g, " ")} an alarm that is ${state.replace(/-/g, " ")}: ${reason}`, { action, state });
  }
}

export function newAlarmPoint(priority: AlarmPriority, now: number): AlarmPoint {
  return {
    state: "normal",
    active: false,
    priority,
    shelvedUntil: null,
    shelveReason: null,
    suppressedReason: null,
    outOfServiceReason: null,
    activatedAt: null,
    occurrenceOpen: false,
    changedAt: now,
  };
}

const ANNUNCIATED: ReadonlySet<AlarmState> = new Set(["normal", "unacknowledged", "acknowledged", "rtn-unacknowledged"]);

/** The state an alarm returns to when a shelve, suppression or out-of-service ends. */
function resumeState(p: AlarmPoint, ignoreSuppression = false): AlarmState {
  if (!ignoreSuppression && p.suppressedReason) return "suppressed-by-design";
  return p.active ? "unacknowledged" : "normal";
}

function requireText(value: string | null | undefined, what: string): string {
  const t = (value ?? "").trim();
  if (!t) throw new ValidationError(`${what} is required.`);
  if (t.length > 1000) throw new ValidationError(`${what} must be at most 1000 characters.`);
  return t;
}

/**
 * Apply one action to an alarm point at time `now` (epoch ms). Returns the new point, or `null`
 * when a system action changes nothing. Throws IllegalTransitionError (409) for a person action
 * that does not apply, ValidationError (422) for a missing comment/reason or a bad duration.
 */
export function applyAlarmAction(p: AlarmPoint, a: AlarmAction, now: number): TransitionResult | null {
  const s = p.state;
  const out = (next: Partial<AlarmPoint>, announce = false, occurrence: "start" | "end" | null = null): TransitionResult => {
    const point: AlarmPoint = { ...p, ...next, changedAt: now };
    if (occurrence === "start") {
      point.occurrenceOpen = true;
      point.activatedAt = now;
    }
    if (occurrence === "end") point.occurrenceOpen = false;
    return { point, from: s, to: point.state, announce, occurrence };
  };
  const illegal = (reason: string): never => {
    throw new IllegalTransitionError(a.kind, s, reason);
  };
  /** Entering `unacknowledged` from a non-annunciated situation opens an occurrence unless one is open. */
  const reannounce = (next: Partial<AlarmPoint>): TransitionResult => {
    const to = next.state ?? s;
    const opens = to === "unacknowledged" && !p.occurrenceOpen;
    return out(next, to === "unacknowledged", opens ? "start" : null);
  };

  switch (a.kind) {
    case "activate": {
      if (p.active) return null;
      if (s === "normal" || s === "rtn-unacknowledged")
        return out({ state: "unacknowledged", active: true, priority: a.priority }, true, "start");
      // Shelved, suppressed or out of service: remembered, not announced, not an occurrence.
      return out({ active: true, priority: a.priority, activatedAt: now });
    }
    case "clear": {
      if (!p.active) return null;
      const end = p.occurrenceOpen ? "end" : null;
      if (s === "unacknowledged") return out({ state: "rtn-unacknowledged", active: false }, false, end);
      if (s === "acknowledged") return out({ state: "normal", active: false, activatedAt: null }, false, end);
      return out({ active: false, activatedAt: null }, false, end);
    }
    case "set-priority": {
      if (a.priority === p.priority) return null;
      const higher = PRIORITY_RANK[a.priority] > PRIORITY_RANK[p.priority];
      // An escalation of an acknowledged alarm puts it in front of the operator again.
      if (higher && p.active && (s === "acknowledged" || s === "unacknowledged"))
        return out({ state: "unacknowledged", priority: a.priority }, true);
      return out({ priority: a.priority });
    }
    case "suppress": {
      const reason = a.reason.trim() || "suppressed by design";
      if (s === "shelved" || s === "out-of-service" || s === "suppressed-by-design") {
        if (p.suppressedReason === reason) return null;
        return out({ suppressedReason: reason });
      }
      return out({ state: "suppressed-by-design", suppressedReason: reason });
    }
    case "unsuppress": {
      if (p.suppressedReason === null) return null;
      if (s !== "suppressed-by-design") return out({ suppressedReason: null });
      return reannounce({ state: resumeState(p, true), suppressedReason: null });
    }
    case "shelve-expired": {
      if (s !== "shelved") return null;
      return reannounce({ state: resumeState(p), shelvedUntil: null, shelveReason: null });
    }
    case "acknowledge": {
      if (s === "unacknowledged" || s === "rtn-unacknowledged") {
        if (p.priority === "urgent") requireText(a.comment, "A comment for acknowledging an urgent alarm");
        return out({ state: s === "unacknowledged" ? "acknowledged" : "normal", ...(s === "rtn-unacknowledged" ? { activatedAt: null } : {}) });
      }
      if (s === "acknowledged") return illegal("it is already acknowledged.");
      if (s === "normal") return illegal("there is nothing to acknowledge.");
      return illegal("only an announced alarm can be acknowledged.");
    }
    case "shelve": {
      if (!ANNUNCIATED.has(s)) {
        if (s === "shelved") return illegal("it is already shelved; unshelve it first.");
        return illegal("it is not in front of the operator.");
      }
      const reason = requireText(a.reason, "A reason for shelving");
      if (!Number.isFinite(a.minutes) || a.minutes <= 0)
        throw new ValidationError("The shelve duration must be a positive number of minutes.");
      if (a.minutes > a.maxMinutes)
        throw new ValidationError(`The shelve duration may be at most ${a.maxMinutes} minutes under this alarm's policy.`);
      return out({ state: "shelved", shelvedUntil: now + Math.round(a.minutes * 60_000), shelveReason: reason });
    }
    case "unshelve": {
      if (s !== "shelved") return illegal("it is not shelved.");
      return reannounce({ state: resumeState(p), shelvedUntil: null, shelveReason: null });
    }
    case "remove-from-service": {
      if (s === "out-of-service") return illegal("it is already out of service.");
      const reason = requireText(a.reason, "A reason for taking an alarm out of service");
      // A pending suppression is kept: it takes effect again on return to service.
      return out({ state: "out-of-service", outOfServiceReason: reason, shelvedUntil: null, shelveReason: null });
    }
    case "return-to-service": {
      if (s !== "out-of-service") return illegal("it is in service.");
      return reannounce({ state: resumeState(p), outOfServiceReason: null });
    }
  }
}

/** Is the alarm in front of the operator and asking for attention? */
export function needsAcknowledgement(state: AlarmState): boolean {
  return state === "unacknowledged" || state === "rtn-unacknowledged";
}
