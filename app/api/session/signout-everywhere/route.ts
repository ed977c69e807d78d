/** POST /api/session/signout-everywhere — end every session of the caller on every device. */
import { NextResponse } from "next/server";
import { UnauthenticatedError } from "@/lib/domain/errors";
import { handle } from "@/lib/http";
import { notifyUserChanged } from "@/lib/data/server-context";
import { getSessionClaims } from "@/lib/auth/guard";
import { bumpSessionVersion } from "@/lib/data/auth";

export const POST = handle(async () => {
  const claims = await getSessionClaims();
  if (!claims) throw new UnauthenticatedError();
  await bumpSessionVersion(claims.userId);
  notifyUserChanged(claims.userId);
  return NextResponse.json({ ok: true });
});
