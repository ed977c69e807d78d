import { listSites } from "@/lib/data/admin/sites";
import { pageMetadata, requirePageContext } from "@/app/(console)/_shell/page-context";
import { listMySubscriptions } from "@/lib/reports/delivery";
import { ReportTabs } from "../_components/report-tabs";
import { SubscriptionsForm } from "../_components/subscriptions-form";

export const dynamic = "force-dynamic";
export const metadata = pageMetadata("Report e-mails");

export default async function SubscriptionsPage() {
  const ctx = await requirePageContext();
  const [subs, sites] = await Promise.all([listMySubscriptions(ctx), listSites(ctx)]);
  return (
    <div className="flex flex-col gap-4">
      <ReportTabs active="/reports/subscriptions" />
      <h1 className="text-xl font-semibold">Report e-mails to {ctx.email}</h1>
      <p className="text-sm text-muted">Reports arrive as a PDF attachment. The handover goes out at the end of every shift of the site: the whole site&apos;s, or only one area&apos;s (its loops, alarms and notes, with the site&apos;s shift notes); weekly reports on Monday for the previous week (UTC). Each goes out once; mail stops when your membership ends.</p>
      <SubscriptionsForm subscriptions={subs} sites={sites.map((s) => ({ id: s.id, name: s.name, areas: s.areas.map((a) => ({ id: a.id, name: a.name })) }))} />
    </div>
  );
}
