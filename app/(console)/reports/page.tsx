import { redirect } from "next/navigation";
import { ReportsView } from "@/app/(console)/reports/_components/reports-view";
import { getContextOrNull } from "@/lib/auth/guard";
import { ReportTabs } from "./_components/report-tabs";

export const dynamic = "force-dynamic";
export const metadata = { title: "Reports · Rimguard" };

export default async function ReportsPage() {
  const ctx = await getContextOrNull();
  if (!ctx) redirect("/signin");
  return (
    <div className="flex flex-col gap-3">
      <ReportTabs active="/reports" />
      <ReportsView />
    </div>
  );
}
