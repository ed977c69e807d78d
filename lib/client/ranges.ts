/** Time ranges of the loop trends (15 min to 30 days); plain data, usable on server and client. */
export const RANGES = [
  { key: "15m", label: "15 min", ms: 15 * 60e3 },
  { key: "1h", label: "1 h", ms: 3600e3 },
  { key: "6h", label: "6 h", ms: 6 * 3600e3 },
  { key: "24h", label: "24 h", ms: 24 * 3600e3 },
  { key: "7d", label: "7 d", ms: 7 * 86400e3 },
  { key: "30d", label: "30 d", ms: 30 * 86400e3 },
] as const;

export type RangeKey = (typeof RANGES)[number]["key"];

export function isRangeKey(v: unknown): v is RangeKey {
  return RANGES.some((r) => r.key === v);
}
