/**
 * Priority mark (docs/visual-language.md): shape + number + word, never colour alone.
 * urgent = filled hexagon "1", high = filled diamond "2", low = outlined circle "3".
 */
import type { AlarmPriority, AlarmState } from "@/lib/domain/types";
import { ALARM_STATE_WORDS } from "@/lib/client/format";

const NUMBER: Record<AlarmPriority, string> = { urgent: "1", high: "2", low: "3" };

/** `muted`: the alarm is not asking for anyone (normal, shelved, suppressed, out of service): grey, same shape. */
export function PriorityShape({ priority, size = 20, pulse = false, muted = false }: { priority: AlarmPriority; size?: number; pulse?: boolean; muted?: boolean }) {
  const cls = pulse ? "pulse-unack" : undefined;
  if (muted)
    return (
      <svg width={size} height={size} viewBox="0 0 20 20" aria-hidden="true" style={{ flex: "none" }}>
        {priority === "urgent" && <polygon points="10,1 18,5.5 18,14.5 10,19 2,14.5 2,5.5" fill="none" stroke="var(--rg-suppressed)" strokeWidth="1.6" />}
        {priority === "high" && <polygon points="10,1 19,10 10,19 1,10" fill="none" stroke="var(--rg-suppressed)" strokeWidth="1.6" />}
        {priority === "low" && <circle cx="10" cy="10" r="8" fill="none" stroke="var(--rg-suppressed)" strokeWidth="1.6" strokeDasharray="3 2" />}
        <text x="10" y="14" textAnchor="middle" fontSize="11" fontWeight="700" fontFamily="var(--font-mono)" fill="var(--rg-suppressed)">
          {NUMBER[priority]}
        </text>
      </svg>
    );
  return (
    <svg width={size} height={size} viewBox="0 0 20 20" aria-hidden="true" className={cls} style={{ flex: "none" }}>
      {priority === "urgent" && (
        <polygon points="10,1 18,5.5 18,14.5 10,19 2,14.5 2,5.5" fill="var(--rg-urgent-fill)" stroke="var(--rg-urgent)" strokeWidth="1" />
      )}
      {priority === "high" && <polygon points="10,1 19,10 10,19 1,10" fill="var(--rg-high-fill)" stroke="var(--rg-high)" strokeWidth="1" />}
      {priority === "low" && <circle cx="10" cy="10" r="8" fill="none" stroke="var(--rg-low)" strokeWidth="2.2" />}
      <text
        x="10"
        y="14"
        textAnchor="middle"
        fontSize="11"
        fontWeight="700"
        fontFamily="var(--font-mono)"
        fill={priority === "low" ? "var(--rg-low)" : priority === "high" ? "#1b1300" : "#ffffff"}
      >
        {NUMBER[priority]}
      </text>
    </svg>
  );
}

export function PriorityMark({
  priority,
  state,
  shelvedUntil,
  size = 20,
  showWord = true,
  showState = true,
}: {
  priority: AlarmPriority;
  state?: AlarmState;
  shelvedUntil?: string | null;
  size?: number;
  showWord?: boolean;
  /** Write the state in words next to the mark (off where a column already says it). */
  showState?: boolean;
}) {
  const word = priority;
  let stateWord = state ? (ALARM_STATE_WORDS[state] ?? state) : null;
  if (state === "shelved" && shelvedUntil) stateWord = `shelved until ${new Date(shelvedUntil).toISOString().slice(11, 16)} UTC`;
  const pulse = state === "unacknowledged" || state === "rtn-unacknowledged";
  const muted = state !== undefined && !(state === "unacknowledged" || state === "acknowledged" || state === "rtn-unacknowledged");
  const colour = muted ? "text-suppressed" : priority === "urgent" ? "text-urgent" : priority === "high" ? "text-high" : "text-low";
  return (
    <span className="inline-flex items-center gap-1.5 whitespace-nowrap" title={`${word} priority${stateWord ? `, ${stateWord}` : ""}`}>
      <PriorityShape priority={priority} size={size} pulse={pulse} muted={muted} />
      {showWord && <span className={`font-semibold ${colour}`}>{word}</span>}
      {showState && stateWord && <span className="text-muted">{stateWord}</span>}
    </span>
  );
}
