/**
 * A report document on screen: the same cells the CSV and the PDF print (lib/reports/document.ts),
 * so the three agree. Server component.
 */
import type { ReportDoc } from "@/lib/reports/document";

export function ReportDocView({ doc }: { doc: ReportDoc }) {
  return (
    <div className="flex flex-col gap-4" data-testid={`report-${doc.kind}`}>
      {doc.sections.map((s) => (
        <section key={s.id} className="rounded-md border border-line bg-surface p-3" aria-label={s.title} data-section={s.id}>
          <h2 className="mb-2 font-semibold">{s.title}</h2>
          {s.lines?.map((l) => (
            <p key={l} className="mb-1 text-xs text-muted">
              {l}
            </p>
          ))}
          {s.chart && (
            <figure className="mb-2" aria-label={s.chart.title}>
              <figcaption className="text-xs text-muted">{s.chart.title}</figcaption>
              <svg width={chartWidth(s.chart)} height={s.chart.bars.length * 20} viewBox={`0 0 ${chartWidth(s.chart)} ${s.chart.bars.length * 20}`} role="img" className="max-w-full">
                {s.chart.bars.map((b, i) => {
                  const max = Math.max(1, ...s.chart!.bars.map((x) => Math.max(x.value, x.target ?? 0)));
                  const x0 = labelWidth(s.chart!);
                  return (
                    <g key={b.label} transform={`translate(0 ${i * 20})`}>
                      <text x="0" y="13" fontSize="11" fill="currentColor">
                        {b.label}
                      </text>
                      <rect x={x0} y="3" width={(250 * b.value) / max} height="12" fill="var(--rg-accent)" opacity="0.55" />
                      <rect x={x0} y="3" width="250" height="12" fill="none" stroke="var(--rg-line)" />
                      {b.target !== undefined && <line x1={x0 + (250 * b.target) / max} x2={x0 + (250 * b.target) / max} y1="0" y2="18" stroke="currentColor" strokeWidth="1.5" />}
                      <text x={x0 + 258} y="13" fontSize="11" fill="currentColor">
                        {b.value.toFixed(1)} {s.chart!.unit}
                      </text>
                    </g>
                  );
                })}
              </svg>
            </figure>
          )}
          {s.rows.length === 0 ? (
            <p className="text-sm text-muted">{s.empty ?? "None."}</p>
          ) : (
            <div className="overflow-x-auto">
              <table className="num w-full text-left text-sm">
                <thead className="text-xs text-muted">
                  <tr>
                    {s.columns.map((c) => (
                      <th key={c.label} className="border-b border-line px-2 py-1 font-medium">
                        {c.label}
                        {c.unit ? ` [${c.unit}]` : ""}
                      </th>
                    ))}
                  </tr>
                </thead>
                <tbody>
                  {s.rows.map((r, i) => (
                    <tr key={i} className="border-b border-line/60 align-top">
                      {r.map((cell, j) => (
                        <td key={j} className={`${unbroken(cell) ? "whitespace-nowrap" : "whitespace-pre-wrap"} px-2 py-1`}>
                          {cell}
                        </td>
                      ))}
                    </tr>
                  ))}
                </tbody>
              </table>
            </div>
          )}
        </section>
      ))}
    </div>
  );
}

/** Room for the bars' labels: about 6.5 px per character at 11 px, at least 70 px (the former fixed offset). */
function labelWidth(c: { bars: { label: string }[] }): number {
  return Math.max(70, Math.ceil(6.5 * Math.max(0, ...c.bars.map((b) => b.label.length))) + 10);
}

function chartWidth(c: { bars: { label: string }[] }): number {
  return labelWidth(c) + 330;
}

/** A short cell without spaces (a tag such as FIC-4203, a time, a figure) is kept on one line: a browser would break it at its hyphen. */
function unbroken(cell: string): boolean {
  return cell.length <= 24 && !/\s/.test(cell);
}
