/** An honest placeholder: says what the page will hold and what it waits for. */
export function EmptyState({ title, children }: { title: string; children: React.ReactNode }) {
  return (
    <section aria-labelledby="empty-title" className="mx-auto mt-10 max-w-2xl rounded-lg border border-dashed border-line bg-surface p-8">
      <h1 id="empty-title" className="mb-2 text-xl font-semibold">
        {title}
      </h1>
      <div className="space-y-2 text-sm text-muted">{children}</div>
    </section>
  );
}
