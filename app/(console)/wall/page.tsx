import { redirect } from "next/navigation";
import { WallView } from "@/app/(console)/wall/_components/wall-view";
import { getContextOrNull } from "@/lib/auth/guard";
import { CAUTION_TEXT } from "../_shell/caution";

export const dynamic = "force-dynamic";
export const metadata = { title: "Wall · Rimguard" };

export default async function WallPage() {
  const ctx = await getContextOrNull();
  if (!ctx) redirect("/signin");
  return <WallView role={ctx.role} caution={`${CAUTION_TEXT} Rimguard never writes to a controller.`} />;
}
