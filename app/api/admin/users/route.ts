import { NextResponse } from "next/server";
import { inviteSchema, inviteUser, listMembers } from "@/lib/data/admin/users";
import { requireContext } from "@/lib/auth/guard";
import { handle, parseBody } from "@/lib/http";

export const dynamic = "force-dynamic";

/** Members of the tenant and its invitations (admin). */
export const GET = handle(async () => {
  const ctx = await requireContext("admin");
  return NextResponse.json(await listMembers(ctx));
});

/** Invite by e-mail: `{ email, role, reason? }` -> 201 with the invitation (the link goes only by e-mail). */
export const POST = handle(async (req: Request) => {
  const ctx = await requireContext("admin");
  const body = await parseBody(req, inviteSchema);
  return NextResponse.json({ invitation: await inviteUser(ctx, body) }, { status: 201 });
});
