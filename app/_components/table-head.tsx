/**
 * The head row of the console's small data tables: muted, normal-weight labels, left-aligned
 * unless a column says `right`, spaced by `cell` (the last column by `lastCell`, no gap after it).
 */
import type { ReactNode } from "react";

export type HeadColumn = ReactNode | { label: ReactNode; right?: boolean; className?: string };

export const RULED_ROW = "border-b border-line text-left text-muted";

export function TableHead({
  columns,
  rowClassName = RULED_ROW,
  theadClassName,
  cell = "py-1 pr-2",
  lastCell = "py-1",
}: {
  columns: HeadColumn[];
  rowClassName?: string;
  theadClassName?: string;
  cell?: string;
  lastCell?: string;
}) {
  return (
    <thead className={theadClassName}>
      <tr className={rowClassName || undefined}>
        {columns.map((c, i) => {
          const col = c !== null && typeof c === "object" && "label" in c ? c : { label: c };
          const spacing = i === columns.length - 1 ? lastCell : cell;
          const className = [spacing, col.right ? "text-right" : "", col.className ?? "", "font-normal"].filter(Boolean).join(" ");
          return (
            <th key={i} className={className}>
              {col.label}
            </th>
          );
        })}
      </tr>
    </thead>
  );
}

/** A right-aligned column (numbers). */
export const right = (label: ReactNode): HeadColumn => ({ label, right: true });
