import { NextResponse } from "next/server";
import { revokeDevice } from "@/lib/data/admin/devices";
import { idParam, reasonSchema } from "@/lib/admin/route-helpers";
import { requireContext } from "@/lib/auth/guard";
import { handle, parseBody } from "@/lib/http";

/** Revoke a device credential: `{ reason }` (kept in the list, marked revoked). */
export const DELETE = handle(async (req: Request, { params }: { params: Promise<{ deviceId: string }> }) => {
  const ctx = await requireContext("admin");
  const id = idParam((await params).deviceId, "deviceId");
  const { reason } = await parseBody(req, reasonSchema);
  return NextResponse.json({ device: await revokeDevice(ctx, id, reason) });
});
