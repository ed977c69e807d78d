import { cookies } from "next/headers";
import { requirePageContext } from "@/app/(console)/_shell/page-context";
import { listMemberships } from "@/lib/data/auth";
import { DATABASE_UNAVAILABLE, isDatabaseUnavailable } from "@/lib/data/db/unavailable";
import { parseTheme, THEME_COOKIE } from "@/lib/theme";
import { roleAtLeast } from "@/lib/domain/types";
import { CautionLine } from "./_shell/caution";
import { ConsoleNav } from "./_shell/console-nav";
import { SessionKeeper } from "./_shell/session-keeper";
import { TenantSwitcher } from "./_shell/tenant-switcher";
import { ThemeToggle } from "./_shell/theme-toggle";
import { UserMenu } from "./_shell/user-menu";

export const dynamic = "force-dynamic";

export default async function ConsoleLayout({ children }: { children: React.ReactNode }) {
  const ctx = await requirePageContext();
  // During a database outage the guard answers from the last-known membership (ctx.membershipAsOf):
  // the console still opens (the alarm list works from memory), with the outage said at the top.
  const memberships = await listMemberships(ctx.userId).catch((err: unknown) => {
    if (!isDatabaseUnavailable(err)) throw err;
    return [{ tenantId: ctx.tenantId, tenantSlug: ctx.tenantSlug, tenantName: ctx.tenantName, role: ctx.role }];
  });
  const links = [
    { href: "/", label: "Control room" },
    { href: "/loops", label: "Loops" },
    { href: "/alarms", label: "Alarms" },
    { href: "/work-list", label: "Work list" },
    { href: "/reports", label: "Reports" },
    ...(roleAtLeast(ctx.role, "admin") ? [{ href: "/admin", label: "Admin" }] : []),
  ];
  return (
    <div className="flex min-h-screen flex-col">
      <SessionKeeper />
      <a href="#main" className="skip-link">
        Skip to content
      </a>
      <header className="border-b border-line bg-surface">
        <div className="flex flex-wrap items-center gap-x-6 gap-y-2 px-4 py-2">
          <span className="flex items-center gap-2 font-semibold tracking-tight">
            <svg width="22" height="22" viewBox="0 0 40 40" aria-hidden="true">
              <circle cx="20" cy="20" r="16" fill="none" stroke="currentColor" strokeWidth="3" />
              <circle cx="31" cy="12" r="3.6" fill="var(--rg-accent)" />
            </svg>
            Rimguard
          </span>
          <ConsoleNav links={links} />
          <div className="ml-auto flex flex-wrap items-center gap-3">
            <TenantSwitcher
              current={{ tenantId: ctx.tenantId, tenantName: ctx.tenantName }}
              memberships={memberships.map((m) => ({ tenantId: m.tenantId, tenantName: m.tenantName, role: m.role }))}
            />
            <ThemeToggle initial={parseTheme((await cookies()).get(THEME_COOKIE)?.value)} />
            <UserMenu name={ctx.name} email={ctx.email} role={ctx.role} />
          </div>
        </div>
      </header>
      {ctx.membershipAsOf != null && (
        <p role="alert" className="border-b border-line bg-surface px-4 py-2 text-sm text-urgent">
          {DATABASE_UNAVAILABLE}
        </p>
      )}
      <main id="main" className="flex-1 px-4 py-4">
        {children}
      </main>
      <footer className="sticky bottom-0 border-t border-line bg-surface px-4 py-2">
        <CautionLine />
      </footer>
    </div>
  );
}
