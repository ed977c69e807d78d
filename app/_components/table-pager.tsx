"use client";

import {
  getCoreRowModel,
  getFilteredRowModel,
  getPaginationRowModel,
  getSortedRowModel,
  useReactTable,
  type ColumnDef,
  type SortingState,
  type Table,
} from "@tanstack/react-table";
import { useState, type ReactNode } from "react";

/** A client-side sorted, filtered and paged TanStack table, sorted by `initialSort` at first. */
// eslint-disable-next-line @typescript-eslint/no-explicit-any -- column value types differ per column, as in useReactTable
export function usePagedTable<T>(data: T[], columns: ColumnDef<T, any>[], pageSize: number, initialSort: SortingState = []): Table<T> {
  const [sorting, setSorting] = useState<SortingState>(initialSort);
  return useReactTable({
    data,
    columns,
    state: { sorting },
    onSortingChange: setSorting,
    getCoreRowModel: getCoreRowModel(),
    getSortedRowModel: getSortedRowModel(),
    getFilteredRowModel: getFilteredRowModel(),
    getPaginationRowModel: getPaginationRowModel(),
    initialState: { pagination: { pageSize } },
  });
}

/** The row under a paged TanStack table: previous, "page n of m" with a count, next. */
export function TablePager<T>({ table, count }: { table: Table<T>; count: ReactNode }) {
  return (
    <div className="flex items-center gap-2 text-sm">
      <PageButton onClick={() => table.previousPage()} disabled={!table.getCanPreviousPage()}>
        Previous
      </PageButton>
      <span className="num">
        page {table.getState().pagination.pageIndex + 1} of {Math.max(1, table.getPageCount())} ·{" "}
        {count}
      </span>
      <PageButton onClick={() => table.nextPage()} disabled={!table.getCanNextPage()}>
        Next
      </PageButton>
    </div>
  );
}

function PageButton({ onClick, disabled, children }: { onClick: () => void; disabled: boolean; children: ReactNode }) {
  return (
    <button type="button" className="rounded border border-line px-2 py-0.5 disabled:opacity-50" onClick={onClick} disabled={disabled}>
      {children}
    </button>
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
