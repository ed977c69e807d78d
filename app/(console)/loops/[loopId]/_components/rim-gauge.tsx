/**
 * Rim gauge (our instrument, docs/visual-language.md): a horizontal bar from radius 0 to 1.05; the current
 * spectral radius as a tick; warning and alarm radii as notches; the recent range as a faint
 * band. The number and the rim distance sit beside it.
 */
import { fmt } from "@/lib/client/format";

const MAX = 1.05;

export function RimGauge({
  radius,
  warn,
  alarm,
  recentMin,
  recentMax,
  stale = false,
  width = 160,
  compact = false,
}: {
  radius: number | null;
  warn?: number | null;
  alarm?: number | null;
  recentMin?: number | null;
  recentMax?: number | null;
  stale?: boolean;
  width?: number;
  compact?: boolean;
}) {
  const h = 18;
  const x = (r: number) => (Math.max(0, Math.min(MAX, r)) / MAX) * (width - 2) + 1;
  const beyond = radius !== null && radius >= 1;
  const pastAlarm = radius !== null && alarm != null && radius >= alarm;
  const tickColour = stale ? "var(--rg-suppressed)" : beyond || pastAlarm ? "var(--rg-urgent)" : "var(--rg-ink)";
  const label = radius === null ? "no radius yet" : `spectral radius ${fmt(radius)}, rim distance ${fmt(1 - radius)}`;
  return (
    <span className="inline-flex items-center gap-2" role="img" aria-label={label}>
      <svg width={width} height={h} viewBox={`0 0 ${width} ${h}`} aria-hidden="true" style={{ flex: "none" }}>
        <rect x="1" y="7" width={width - 2} height="4" fill="var(--rg-line)" rx="1" />
        {recentMin != null && recentMax != null && Number.isFinite(recentMin) && Number.isFinite(recentMax) && (
          <rect x={x(recentMin)} y="5" width={Math.max(1, x(recentMax) - x(recentMin))} height="8" fill="var(--rg-muted)" opacity="0.3" />
        )}
        {/* the rim itself */}
        <line x1={x(1)} y1="2" x2={x(1)} y2={h - 2} stroke="var(--rg-ink)" strokeWidth="2" />
        {warn != null && <path d={`M${x(warn) - 3} 2 L${x(warn) + 3} 2 L${x(warn)} 6 Z`} fill="var(--rg-muted)" />}
        {alarm != null && <path d={`M${x(alarm) - 3.5} ${h - 1} L${x(alarm) + 3.5} ${h - 1} L${x(alarm)} ${h - 6} Z`} fill="var(--rg-ink)" />}
        {radius !== null && <rect x={x(radius) - 1.5} y="3" width="3" height={h - 6} fill={tickColour} />}
      </svg>
      {!compact && (
        <span className={`num font-mono text-sm ${stale ? "text-suppressed" : ""}`}>
          ρ {fmt(radius)} <span className="text-muted">rim {fmt(radius === null ? null : 1 - radius)}</span>
        </span>
      )}
    </span>
  );
}
