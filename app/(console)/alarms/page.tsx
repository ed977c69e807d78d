import { redirect } from "next/navigation";
import { AlarmTable } from "@/app/(console)/alarms/_components/alarm-table";
import { KpiCharts } from "@/app/_components/kpi-charts";
import { getContextOrNull } from "@/lib/auth/guard";

export const dynamic = "force-dynamic";
export const metadata = { title: "Alarms · Rimguard" };

export default async function AlarmsPage() {
  const ctx = await getContextOrNull();
  if (!ctx) redirect("/signin");
  return (
    <div className="flex flex-col gap-4">
      <h1 className="text-xl font-semibold">Alarms</h1>
      <AlarmTable role={ctx.role} />
      <KpiCharts />
    </div>
  );
}
