import { redirect } from "next/navigation";
import { LoopForm } from "@/app/(console)/loops/_components/loop-form";
import { pageMetadata, requirePageContext } from "@/app/(console)/_shell/page-context";
import { roleAtLeast } from "@/lib/domain/types";

export const dynamic = "force-dynamic";
export const metadata = pageMetadata("New loop");

export default async function NewLoopPage() {
  const ctx = await requirePageContext();
  if (!roleAtLeast(ctx.role, "engineer")) redirect("/loops");
  return (
    <div className="flex flex-col gap-3">
      <h1 className="text-xl font-semibold">Add a loop</h1>
      <LoopForm />
    </div>
  );
}
