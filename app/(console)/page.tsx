import { redirect } from "next/navigation";
import { ControlRoom } from "@/app/_components/control-room";
import { getContextOrNull } from "@/lib/auth/guard";

export const dynamic = "force-dynamic";
export const metadata = { title: "Control room · Rimguard" };

export default async function ControlRoomPage() {
  const ctx = await getContextOrNull();
  if (!ctx) redirect("/signin");
  return <ControlRoom role={ctx.role} />;
}
