/** The admin sections' list table: a ruled head row of plain labels, the rows given, a load error above. */
import type { ReactNode } from "react";

export function AdminTable({ columns, error, children }: { columns: ReactNode[]; error?: unknown; children: ReactNode }) {
  return (
    <>
      {error ? <p className="text-sm text-urgent">{(error as Error).message}</p> : null}
      <table className="w-full rounded-md border border-line bg-surface text-sm">
        <thead>
          <tr className="border-b border-line text-left">{columns.map((c, i) => <th key={i} className="px-2 py-1">{c}</th>)}</tr>
        </thead>
        <tbody>{children}</tbody>
      </table>
    </>
  );
}
