/** DELETE /api/reports/subscriptions/[subscriptionId] — end one of the caller's own report e-mails (viewer). */
import { NextResponse } from "next/server";
import { parseId, handle } from "@/lib/http";
import { requireContext } from "@/lib/auth/guard";
import { unsubscribe } from "@/lib/reports/delivery";

export const dynamic = "force-dynamic";

export const DELETE = handle(async (_req: Request, { params }: { params: Promise<{ subscriptionId: string }> }) => {
  const ctx = await requireContext("viewer");
  await unsubscribe(ctx, parseId((await params).subscriptionId, "subscription id"));
  return new NextResponse(null, { status: 204 });
});
