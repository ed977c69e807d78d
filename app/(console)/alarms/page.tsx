import { AlarmTable } from "@/app/(console)/alarms/_components/alarm-table";
import { KpiCharts } from "@/app/_components/kpi-charts";
import { pageMetadata, requirePageContext } from "@/app/(console)/_shell/page-context";

export const dynamic = "force-dynamic";
export const metadata = pageMetadata("Alarms");

export default async function AlarmsPage() {
  const ctx = await requirePageContext();
  return (
    <div className="flex flex-col gap-4">
      <h1 className="text-xl font-semibold">Alarms</h1>
      <AlarmTable role={ctx.role} />
      <KpiCharts />
    </div>
  );
}
