/**
 * The `<option>`s of a select over rows with a numeric id (sites, areas, loops, members), each
 * labelled by one of its text fields. No client directive: server and client forms both use it.
 */
export function IdOptions<K extends string>({ rows, label }: { rows: readonly ({ id: number } & Record<K, string>)[] | undefined; label: K }) {
  return (
    <>
      {rows?.map((r) => (
        <option key={r.id} value={r.id}>
          {r[label]}
        </option>
      ))}
    </>
  );
}
