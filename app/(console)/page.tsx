import { ControlRoom } from "@/app/_components/control-room";
import { pageMetadata, requirePageContext } from "@/app/(console)/_shell/page-context";

export const dynamic = "force-dynamic";
export const metadata = pageMetadata("Control room");

export default async function ControlRoomPage() {
  const ctx = await requirePageContext();
  return <ControlRoom role={ctx.role} />;
}
