/** The reporting jobs, one link each. Server component. */
import Link from "next/link";

const TABS = [
  { href: "/reports", label: "Overview" },
  { href: "/reports/handover", label: "Shift handover" },
  { href: "/reports/worst-loops", label: "Worst loops" },
  { href: "/reports/fleet-health", label: "Fleet health" },
  { href: "/reports/subscriptions", label: "E-mail delivery" },
];

export function ReportTabs({ active }: { active: string }) {
  return (
    <nav aria-label="Reports" className="flex gap-1 border-b border-line pb-1">
      {TABS.map((t) => (
        <Link
          key={t.href}
          href={t.href}
          aria-current={t.href === active ? "page" : undefined}
          className={`rounded px-3 py-1 text-sm ${t.href === active ? "bg-raised font-medium underline decoration-accent decoration-2 underline-offset-[6px]" : "text-muted hover:bg-raised"}`}
        >
          {t.label}
        </Link>
      ))}
    </nav>
  );
}
