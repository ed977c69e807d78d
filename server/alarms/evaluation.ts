/**
 * Evaluation: one tracker update against the loop's effective policy, turned into state-machine
 * actions on each of the loop's alarm points (lib/domain/alarms). Synchronous: the journal append
 * and the announcement of every resulting transition happen before it returns (actions.ts).
 */
import { evaluateConditions, forecastMinutesOf, isTrustedEstimate, memoryForActive, type ConditionMemory } from "@/lib/domain/alarms/conditions";
import { applyAlarmAction, type AlarmAction } from "@/lib/domain/alarms/state-machine";
import { ALARM_CONDITIONS, type AlarmCondition, type AlarmPriority, type LoopStateDto } from "@/lib/domain/types";
import { commit } from "./actions";
import { policyFor, type AlarmCore } from "./store";

/** Evaluate one tracker update; `refreshLoops` is called for a loop the service does not know yet. */
export function evaluateTrackerUpdate(core: AlarmCore, s: LoopStateDto, refreshLoops: () => void): void {
  const loop = core.loops.get(s.loopId);
  const ids = core.byLoop.get(s.loopId);
  if (!loop || !ids || loop.tenantId !== s.tenantId) {
    if (!loop) refreshLoops();
    return;
  }
  core.lastState.set(s.loopId, s);
  const now = core.ctx.clock.now();
  const policy = policyFor(core, s.loopId);
  const forecastMinutes = forecastMinutesOf(s, now);
  // After a start (a restart, a crash) the alarms are what MariaDB and the journal say, not what
  // this process has seen: until the loop's tracker gives a trusted estimate again, its alarms
  // keep their state (no clear, no suppression, no re-announce; shown values are not updated),
  // and the filters of active alarms start "on" so that evidence must last the off-delay.
  if (!core.evidenced.has(s.loopId)) {
    if (!isTrustedEstimate(s)) return;
    core.evidenced.add(s.loopId);
  }
  const { memory, verdicts } = evaluateConditions(
    core.memory.get(s.loopId) ?? restoredMemory(core, ids),
    s,
    policy,
    { forecastMinutes },
    now,
  );
  core.memory.set(s.loopId, memory);
  for (const c of ALARM_CONDITIONS) {
    const id = ids.get(c);
    const rec = id == null ? undefined : core.points.get(id);
    if (!rec) continue;
    const v = verdicts[c];
    // Shown values follow every update; they are written with the next transition.
    rec.point = { ...rec.point, value: v.value, level: v.level, message: v.message };
    const actions: AlarmAction[] = [];
    if (v.suppressedReason) {
      actions.push({ kind: "suppress", reason: v.suppressedReason });
      if (!v.active) actions.push({ kind: "clear" });
    } else {
      if (v.active) actions.push({ kind: "activate", priority: v.priority }, { kind: "set-priority", priority: v.priority });
      else actions.push({ kind: "clear" });
      actions.push({ kind: "unsuppress" });
    }
    for (const a of actions) {
      const r = applyAlarmAction(rec.point, a, now);
      if (r) commit(core, rec, a, r, null, null);
    }
  }
}

/** Condition filters of a loop this process has not evaluated yet: "on" for the active points. */
function restoredMemory(core: AlarmCore, ids: Map<AlarmCondition, number>): ConditionMemory {
  const active: { condition: AlarmCondition; priority: AlarmPriority }[] = [];
  for (const [condition, id] of ids) {
    const p = core.points.get(id)?.point;
    if (p?.active) active.push({ condition, priority: p.priority });
  }
  return memoryForActive(active);
}
