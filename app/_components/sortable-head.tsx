"use client";

import { flexRender, type Table } from "@tanstack/react-table";

/**
 * The header row of a TanStack table with sortable columns: a button per sortable header, the
 * direction shown by an arrow and announced through `aria-sort`. Shared by the alarm and loop tables.
 */
export function SortableHead<T>({ table, nowrap = false }: { table: Table<T>; nowrap?: boolean }) {
  return (
    <thead>
      {table.getHeaderGroups().map((hg) => (
        <tr key={hg.id} className="border-b border-line text-left">
          {hg.headers.map((h) => {
            const dir = h.column.getIsSorted();
            return (
              <th
                key={h.id}
                className={`${nowrap ? "whitespace-nowrap " : ""}px-2 py-1.5 font-semibold`}
                aria-sort={dir === "asc" ? "ascending" : dir === "desc" ? "descending" : undefined}
              >
                {h.column.getCanSort() ? (
                  <button type="button" onClick={h.column.getToggleSortingHandler()} className="hover:underline">
                    {flexRender(h.column.columnDef.header, h.getContext())}
                    {dir === "asc" ? " ▲" : dir === "desc" ? " ▼" : ""}
                  </button>
                ) : (
                  flexRender(h.column.columnDef.header, h.getContext())
                )}
              </th>
            );
          })}
        </tr>
      ))}
    </thead>
  );
}
