import { notFound, redirect } from "next/navigation";
import { LoopForm } from "@/app/(console)/loops/_components/loop-form";
import { ConfigChangeLog } from "@/app/_components/config-change-log";
import { getLoopConfig } from "@/lib/data/admin/loops";
import { pageMetadata, requirePageContext } from "@/app/(console)/_shell/page-context";
import { roleAtLeast } from "@/lib/domain/types";

export const dynamic = "force-dynamic";
export const metadata = pageMetadata("Edit loop");

export default async function EditLoopPage({ params }: { params: Promise<{ loopId: string }> }) {
  const ctx = await requirePageContext();
  const id = Number((await params).loopId);
  if (!Number.isInteger(id) || id <= 0) notFound();
  if (!roleAtLeast(ctx.role, "engineer")) redirect(`/loops/${id}`);
  const cfg = await getLoopConfig(ctx, id);
  if (!cfg) notFound();
  const { id: _id, slug: _slug, ...fields } = cfg;
  return (
    <div className="flex flex-col gap-3">
      <h1 className="text-xl font-semibold">
        Edit <span className="font-mono">{cfg.tag}</span>
      </h1>
      <LoopForm initial={fields} loopId={id} />
      <ConfigChangeLog entity="loop" entityId={id} />
    </div>
  );
}
