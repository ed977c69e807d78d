import { WallView } from "@/app/(console)/wall/_components/wall-view";
import { pageMetadata, requirePageContext } from "@/app/(console)/_shell/page-context";
import { CAUTION_TEXT } from "../_shell/caution";

export const dynamic = "force-dynamic";
export const metadata = pageMetadata("Wall");

export default async function WallPage() {
  const ctx = await requirePageContext();
  return <WallView role={ctx.role} caution={`${CAUTION_TEXT} Rimguard never writes to a controller.`} />;
}
