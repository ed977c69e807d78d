/**
 * Tracker state (our word): text + a small shape. Healthy `tracking` stays quiet (no colour);
 * the others are neutral too — they describe the estimator, not an alarm.
 */
import type { TrackerState } from "@/lib/domain/types";

const LABEL: Record<TrackerState, string> = {
  learning: "learning",
  tracking: "tracking",
  "low-excitation": "low excitation",
  stale: "stale",
  manual: "manual",
  saturated: "saturated",
  "poor-fit": "poor fit",
};

function Shape({ state }: { state: TrackerState }) {
  const s = "var(--rg-muted)";
  switch (state) {
    case "tracking":
      return <circle cx="6" cy="6" r="4" fill={s} />;
    case "learning":
      return <path d="M6 2 A4 4 0 1 1 5.99 2" fill="none" stroke={s} strokeWidth="1.6" strokeDasharray="3 2" />;
    case "low-excitation":
      return <line x1="1.5" y1="6" x2="10.5" y2="6" stroke={s} strokeWidth="2" />;
    case "stale":
      return (
        <g stroke={s} strokeWidth="1.6" fill="none">
          <circle cx="6" cy="6" r="4.2" />
          <line x1="6" y1="6" x2="6" y2="3" />
          <line x1="6" y1="6" x2="8.2" y2="7" />
        </g>
      );
    case "manual":
      return <rect x="2" y="2" width="8" height="8" fill="none" stroke={s} strokeWidth="1.6" />;
    case "poor-fit":
      // a broken trace: the model's prediction and the PV have parted
      return (
        <g stroke={s} strokeWidth="1.6" fill="none">
          <path d="M1.5 8 L4.5 4.5" />
          <path d="M7.5 7.5 L10.5 4" />
        </g>
      );
    case "saturated":
      return (
        <g fill={s}>
          <rect x="1.5" y="1.5" width="9" height="2.4" />
          <rect x="4.5" y="5" width="3" height="5.5" />
        </g>
      );
  }
}

export function TrackerStateBadge({ state, reason }: { state: TrackerState | null; reason?: string | null }) {
  if (!state) return <span className="text-muted">no estimate yet</span>;
  return (
    <span className="inline-flex items-center gap-1 whitespace-nowrap text-muted" title={reason ?? undefined}>
      <svg width="12" height="12" viewBox="0 0 12 12" aria-hidden="true">
        <Shape state={state} />
      </svg>
      <span>{LABEL[state]}</span>
    </span>
  );
}
