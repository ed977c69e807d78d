import { redirect } from "next/navigation";
import { AdminDevices } from "@/app/(console)/admin/_components/admin-devices";
import { AdminLoopImport } from "@/app/_components/admin-loop-import";
import { AdminOutbox, AdminRules, AdminSites } from "@/app/(console)/admin/_components/admin-misc";
import { AdminSparkplug } from "@/app/(console)/admin/_components/admin-sparkplug";
import { AdminPolicies } from "@/app/(console)/admin/_components/admin-policies";
import { AdminShifts } from "@/app/(console)/admin/_components/admin-shifts";
import { AdminUsers } from "@/app/(console)/admin/_components/admin-users";
import { ConfigChangeLog } from "@/app/_components/config-change-log";
import { pageMetadata, requirePageContext } from "@/app/(console)/_shell/page-context";
import { POLICY_SCOPES, type PolicyScope } from "@/lib/domain/alarms/policy";
import { roleAtLeast } from "@/lib/domain/types";

export const dynamic = "force-dynamic";
export const metadata = pageMetadata("Administration");

const SECTIONS = [
  { id: "levels", label: "Alarm levels", min: "engineer" },
  { id: "inventory", label: "Loop inventory", min: "engineer" },
  { id: "users", label: "Users and roles", min: "admin" },
  { id: "devices", label: "Device credentials", min: "admin" },
  { id: "sparkplug", label: "Sparkplug gateways", min: "admin" },
  { id: "notifications", label: "Notification rules", min: "admin" },
  { id: "sites", label: "Sites and areas", min: "admin" },
  { id: "outbox", label: "Outbox", min: "admin" },
  { id: "log", label: "Change log", min: "engineer" },
] as const;

export default async function AdminPage({ searchParams }: { searchParams: Promise<Record<string, string | string[] | undefined>> }) {
  const ctx = await requirePageContext();
  if (!roleAtLeast(ctx.role, "engineer")) redirect("/");
  const sp = await searchParams;
  const visible = SECTIONS.filter((s) => roleAtLeast(ctx.role, s.min));
  const section = visible.find((s) => s.id === sp.section)?.id ?? "levels";
  const scope = POLICY_SCOPES.includes(sp.scope as PolicyScope) ? (sp.scope as PolicyScope) : roleAtLeast(ctx.role, "admin") ? "tenant" : "loop";
  const id = Number(sp.id) > 0 ? Number(sp.id) : undefined;
  return (
    <div className="flex flex-col gap-4">
      <h1 className="text-xl font-semibold">Administration · {ctx.tenantName}</h1>
      <nav aria-label="Administration sections">
        <ul className="flex flex-wrap gap-1 border-b border-line">
          {visible.map((s) => (
            <li key={s.id}>
              <a
                href={`/admin?section=${s.id}`}
                aria-current={s.id === section ? "page" : undefined}
                className={`inline-block rounded-t border border-b-0 px-3 py-1 text-sm ${s.id === section ? "border-line bg-surface font-semibold" : "border-transparent text-muted hover:text-ink"}`}
              >
                {s.label}
              </a>
            </li>
          ))}
        </ul>
      </nav>
      {section === "levels" && <AdminPolicies role={ctx.role} initialScope={scope} initialId={id} />}
      {section === "inventory" && <AdminLoopImport />}
      {section === "users" && <AdminUsers selfUserId={ctx.userId} />}
      {section === "devices" && <AdminDevices />}
      {section === "sparkplug" && <AdminSparkplug />}
      {section === "notifications" && <AdminRules />}
      {section === "sites" && (
        <>
          <AdminSites />
          <AdminShifts />
        </>
      )}
      {section === "outbox" && <AdminOutbox />}
      {section === "log" && <ConfigChangeLog title="Configuration change log" />}
    </div>
  );
}
