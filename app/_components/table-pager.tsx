"use client";

import type { Table } from "@tanstack/react-table";
import type { ReactNode } from "react";

/** The row under a paged TanStack table: previous, "page n of m" with a count, next. */
export function TablePager<T>({ table, count }: { table: Table<T>; count: ReactNode }) {
  const btn = "rounded border border-line px-2 py-0.5 disabled:opacity-50";
  return (
    <div className="flex items-center gap-2 text-sm">
      <button
        type="button"
        className={btn}
        onClick={() => table.previousPage()}
        disabled={!table.getCanPreviousPage()}
      >
        Previous
      </button>
      <span className="num">
        page {table.getState().pagination.pageIndex + 1} of {Math.max(1, table.getPageCount())} ·{" "}
        {count}
      </span>
      <button
        type="button"
        className={btn}
        onClick={() => table.nextPage()}
        disabled={!table.getCanNextPage()}
      >
        Next
      </button>
    </div>
  );
}

/** The one row a table shows when it has none to show. */
export function EmptyRow({ span, children }: { span: number; children: ReactNode }) {
  return (
    <tr>
      <td colSpan={span} className="px-2 py-3 text-muted">
        {children}
      </td>
    </tr>
  );
}
