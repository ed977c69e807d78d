import { pageMetadata, requirePageContext } from "@/app/(console)/_shell/page-context";
import { roleAtLeast } from "@/lib/domain/types";
import { WorkListSettings } from "./_components/work-list-settings";
import { WorkListView } from "./_components/work-list-view";

export const dynamic = "force-dynamic";
export const metadata = pageMetadata("Work list");

export default async function WorkListPage({ searchParams }: { searchParams: Promise<{ item?: string }> }) {
  const ctx = await requirePageContext();
  const { item } = await searchParams;
  const initialItem = item && /^\d+$/.test(item) ? Number(item) : null;
  return (
    <div className="flex flex-col gap-4">
      <h1 className="text-xl font-semibold">Work list</h1>
      <p className="text-sm text-muted">
        Findings from routine data, for engineers: likely causes with their evidence, not alarms. An item opens when a finding is
        likely enough and is updated while it persists; the figures at open stand beside the latest, so a tuning or maintenance change shows its effect.
      </p>
      <WorkListView canEdit={roleAtLeast(ctx.role, "engineer")} initialItem={initialItem} />
      {roleAtLeast(ctx.role, "engineer") && <WorkListSettings mayEdit={roleAtLeast(ctx.role, "admin")} />}
    </div>
  );
}
