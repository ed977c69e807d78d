import type { ReactNode } from "react";

/** A report page's title and period on the left, its links (downloads, switches) on the right. */
export function ReportHeading({ title, period, periodTestId, children }: { title: string; period: string; periodTestId?: string; children: ReactNode }) {
  return (
    <div className="flex flex-wrap items-baseline justify-between gap-2">
      <div>
        <h1 className="text-xl font-semibold">{title}</h1>
        <p className="num text-sm text-muted" data-testid={periodTestId}>
          {period}
        </p>
      </div>
      {children}
    </div>
  );
}
