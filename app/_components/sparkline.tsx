/** A tiny SVG trend of recent values (oldest left). Fixed scale when lo/hi are given. */
export function Sparkline({
  values,
  lo,
  hi,
  width = 120,
  height = 28,
  level,
  label,
}: {
  values: number[];
  lo?: number;
  hi?: number;
  width?: number;
  height?: number;
  level?: number | null;
  label: string;
}) {
  const finite = values.filter((v) => Number.isFinite(v));
  const min = lo ?? (finite.length ? Math.min(...finite) : 0);
  const max = hi ?? (finite.length ? Math.max(...finite) : 1);
  const span = max - min || 1;
  const n = values.length;
  const y = (v: number) => height - 2 - ((Math.max(min, Math.min(max, v)) - min) / span) * (height - 4);
  let d = "";
  let pen = false;
  for (let i = 0; i < n; i++) {
    const v = values[i]!;
    if (!Number.isFinite(v)) {
      pen = false;
      continue;
    }
    const px = n <= 1 ? width : (i / (n - 1)) * width;
    d += `${pen ? "L" : "M"}${px.toFixed(1)} ${y(v).toFixed(1)}`;
    pen = true;
  }
  return (
    <svg width={width} height={height} viewBox={`0 0 ${width} ${height}`} role="img" aria-label={label}>
      {level != null && level >= min && level <= max && (
        <line x1="0" x2={width} y1={y(level)} y2={y(level)} stroke="var(--rg-muted)" strokeDasharray="2 3" strokeWidth="1" />
      )}
      <path d={d} fill="none" stroke="var(--rg-ink)" strokeWidth="1.3" />
    </svg>
  );
}
