import { inviteSchema, inviteUser, listMembers } from "@/lib/data/admin/users";
import { createRoute, readRoute } from "@/lib/auth/json-route";

export const dynamic = "force-dynamic";

/** Members of the tenant and its invitations (admin). */
export const GET = readRoute("admin", listMembers);

/** Invite by e-mail: `{ email, role, reason? }` -> 201 with the invitation (the link goes only by e-mail). */
export const POST = createRoute("admin", inviteSchema, async (ctx, body) => ({ invitation: await inviteUser(ctx, body) }));
