import { ReportsView } from "@/app/(console)/reports/_components/reports-view";
import { pageMetadata, requirePageContext } from "@/app/(console)/_shell/page-context";
import { ReportTabs } from "./_components/report-tabs";

export const dynamic = "force-dynamic";
export const metadata = pageMetadata("Reports");

export default async function ReportsPage() {
  await requirePageContext();
  return (
    <div className="flex flex-col gap-3">
      <ReportTabs active="/reports" />
      <ReportsView />
    </div>
  );
}
