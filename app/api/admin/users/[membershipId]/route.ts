import { NextResponse } from "next/server";
import { idParam, reasonSchema } from "@/lib/admin/route-helpers";
import { changeRole, removeMember, roleChangeSchema } from "@/lib/data/admin/users";
import { requireContext } from "@/lib/auth/guard";
import { handle, parseBody } from "@/lib/http";

type P = { params: Promise<{ membershipId: string }> };

/** Change a member's role: `{ role, reason }`. */
export const PATCH = handle(async (req: Request, { params }: P) => {
  const ctx = await requireContext("admin");
  const id = idParam((await params).membershipId, "membershipId");
  const body = await parseBody(req, roleChangeSchema);
  return NextResponse.json({ member: await changeRole(ctx, id, body) });
});

/** Remove a member from the tenant: `{ reason }`. */
export const DELETE = handle(async (req: Request, { params }: P) => {
  const ctx = await requireContext("admin");
  const id = idParam((await params).membershipId, "membershipId");
  const { reason } = await parseBody(req, reasonSchema);
  await removeMember(ctx, id, reason);
  return new NextResponse(null, { status: 204 });
});
