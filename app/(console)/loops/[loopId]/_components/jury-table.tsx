/**
 * The Jury test laid out row by row (Jury 1964; Åström & Wittenmark 1997 §3.2), computed in the
 * browser from the characteristic polynomial with lib/control's juryTest (no mathjs) to show its
 * rows; the verdict is the tracker's (the loop's assessment), so page and alarms agree.
 */
import { juryTest } from "@/lib/control/jury";
import { right, TableHead } from "@/app/_components/table-head";

export function polynomialText(c: number[]): string {
  const n = c.length - 1;
  const parts: string[] = [];
  c.forEach((a, i) => {
    const p = n - i;
    if (a === 0 && i > 0) return;
    const mag = Math.abs(a);
    const sign = a < 0 ? "−" : parts.length ? "+" : "";
    const coef = mag === 1 && p > 0 ? "" : mag.toPrecision(5).replace(/\.?0+$/, "");
    const zp = p === 0 ? "" : p === 1 ? "z" : `z^${p}`;
    parts.push(`${sign} ${coef}${zp}`.trim());
  });
  return parts.join(" ");
}

export function JuryTable({ characteristic, stable, rimUndecided }: { characteristic: number[] | null; stable: boolean | null; rimUndecided?: boolean }) {
  if (!characteristic || characteristic.length < 2) {
    return <p className="text-sm text-muted">No characteristic polynomial yet (the tracker is still learning the plant).</p>;
  }
  let result: ReturnType<typeof juryTest>;
  try {
    result = juryTest(characteristic);
  } catch (e) {
    return <p className="text-sm text-urgent">The Jury test could not run: {e instanceof Error ? e.message : String(e)}</p>;
  }
  const n = characteristic.length - 1;
  const showTable = result.table.length <= 24;
  return (
    <div className="flex flex-col gap-2" data-testid="jury">
      <p className="text-sm">
        <span className="text-muted">P(z) = </span>
        <span className="font-mono break-words">{polynomialText(characteristic)}</span>
      </p>
      <p className="text-sm font-semibold" data-testid="jury-verdict">
        Verdict:{" "}
        {rimUndecided
          ? "undecided near the rim — a rounding error in the coefficients can move a root across the unit circle"
          : stable === null
            ? "none yet"
            : stable
              ? "stable — every root strictly inside the unit circle"
              : "NOT stable — a root on or outside the unit circle"}
      </p>
      <table className="w-full text-sm" data-testid="jury-conditions">
        <caption className="sr-only">Jury conditions</caption>
        <TableHead columns={["condition", right("value"), { label: "holds", className: "pl-3" }]} cell="py-1" />
        <tbody>
          {result.conditions.map((c, i) => (
            <tr key={i} className="border-b border-line/50">
              <td className="py-0.5 font-mono">{c.name}</td>
              <td className="num py-0.5 text-right font-mono">{c.value.toPrecision(5)}</td>
              <td className={`py-0.5 pl-3 ${c.ok ? "" : "font-semibold text-urgent"}`}>{c.ok ? "✓ yes" : "✗ no"}</td>
            </tr>
          ))}
        </tbody>
      </table>
      {showTable ? (
        <details>
          <summary className="cursor-pointer text-sm text-muted">Jury table ({result.table.length} rows, degree {n})</summary>
          <div className="overflow-x-auto">
            <table className="text-xs">
              <tbody>
                {result.table.map((row, i) => (
                  <tr key={i}>
                    <th className="pr-2 text-left font-normal text-muted">{i + 1}</th>
                    {row.map((v, j) => (
                      <td key={j} className="num px-1.5 text-right font-mono">
                        {v.toPrecision(4)}
                      </td>
                    ))}
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
        </details>
      ) : (
        <p className="text-xs text-muted">Degree {n}: the full table has {result.table.length} rows; the row conditions above summarise it.</p>
      )}
    </div>
  );
}
