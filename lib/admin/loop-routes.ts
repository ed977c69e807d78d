/**
 * Write handlers of `/api/loops` (POST, engineer) and `/api/loops/[loopId]` (PATCH, engineer),
 * kept here so the pipeline's route files re-export them with one line each.
 */
import { NextResponse } from "next/server";
import { requireContext } from "@/lib/auth/guard";
import { NotFoundError } from "@/lib/domain/errors";
import { handle, parseBody } from "@/lib/http";
import { createLoopSchema, updateLoopSchema } from "./loop-schema";
import { createLoop, getLoopConfig, updateLoop } from "@/lib/data/admin/loops";
import { idParam } from "./route-helpers";

export const createLoopHandler = handle(async (req: Request) => {
  const ctx = await requireContext("engineer");
  const body = await parseBody(req, createLoopSchema);
  return NextResponse.json({ loop: await createLoop(ctx, body) }, { status: 201 });
});

export const updateLoopHandler = handle(async (req: Request, { params }: { params: Promise<{ loopId: string }> }) => {
  const ctx = await requireContext("engineer");
  const id = idParam((await params).loopId, "loopId");
  const body = await parseBody(req, updateLoopSchema);
  return NextResponse.json({ loop: await updateLoop(ctx, id, body) });
});

/** The editable configuration of one loop (engineer; for the edit form). */
export const getLoopConfigHandler = handle(async (_req: Request, { params }: { params: Promise<{ loopId: string }> }) => {
  const ctx = await requireContext("engineer");
  const id = idParam((await params).loopId, "loopId");
  const cfg = await getLoopConfig(ctx, id);
  if (!cfg) throw new NotFoundError("Loop");
  return NextResponse.json({ loop: cfg });
});
