"use client";
/** What each alarm level of a scope means for each of its loops: radius and time constant at the loop's period. */
import { right, TableHead } from "@/app/_components/table-head";
import { fmt, fmtSeconds } from "@/lib/client/format";
import { timeConstantOfRadius } from "@/lib/client/order";
import { radiusForDecayRatio } from "@/lib/domain/assessment";
import type { LoopPolicyView } from "@/lib/domain/services";

export function LevelEquivalents({
  loops,
  angles,
}: {
  loops: LoopPolicyView[];
  angles: Map<number, number>;
}) {
  if (loops.length === 0) return <p className="text-sm text-muted">No loops in this scope.</p>;
  return (
    <div className="overflow-x-auto rounded-md border border-line bg-surface p-3">
      <h3 className="mb-1 font-semibold">What the levels mean for each loop</h3>
      <p className="mb-2 text-xs text-muted">
        Radius and time constant depend on the loop&apos;s estimation period T and on the period of
        its current dominant oscillation; a radius r at period T decays like a time constant τ = −T
        / ln r. Where the current dominant mode does not oscillate, radius and τ stay empty.
      </p>
      <table className="w-full text-xs" data-testid="policy-equivalents">
        <TableHead columns={["loop", "T", "level", right("decay ratio"), right("ζ"), right("radius"), right("τ")]} />
        <tbody>
          {loops.slice(0, 200).flatMap((l) =>
            l.equivalents.map((q, i) => {
              // Where the service has no oscillation period, use the dominant pole's angle now:
              // DR = r^(2π/θ)  =>  r = DR^(θ/2π) (docs/domain.md §1).
              const theta = angles.get(l.loopId);
              const r =
                q.radius ??
                (q.decayRatio != null && theta != null
                  ? radiusForDecayRatio(q.decayRatio, theta)
                  : null);
              const tau =
                q.timeConstantS ??
                (r != null ? timeConstantOfRadius(r, l.estimationPeriodS) : null);
              return (
                <tr key={`${l.loopId}-${i}`} className="border-b border-line/40">
                  <td className="py-0.5 pr-2 font-mono">{i === 0 ? l.tag : ""}</td>
                  <td className="num py-0.5 pr-2">
                    {i === 0 ? fmtSeconds(l.estimationPeriodS) : ""}
                  </td>
                  <td className="py-0.5 pr-2">
                    {q.priority} · {q.source}
                  </td>
                  <td className="num py-0.5 pr-2 text-right font-mono">{fmt(q.decayRatio, 3)}</td>
                  <td className="num py-0.5 pr-2 text-right font-mono">{fmt(q.zeta, 3)}</td>
                  <td className="num py-0.5 pr-2 text-right font-mono">{fmt(r, 4)}</td>
                  <td className="num py-0.5 text-right font-mono">{fmtSeconds(tau)}</td>
                </tr>
              );
            }),
          )}
        </tbody>
      </table>
      {loops.length > 200 && (
        <p className="mt-1 text-xs text-muted">First 200 of {loops.length} loops shown.</p>
      )}
    </div>
  );
}
