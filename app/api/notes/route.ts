/**
 * GET /api/notes?siteId=&areaId=&loopId=&alarmId=&kind=&from=&to= — the operator log, newest first (viewer).
 * POST /api/notes — append a note on a loop, an alarm or (shift note) a site/area (operator).
 */
import { NextResponse } from "next/server";
import { z } from "zod";
import { isoTime, handle, parseBody, parseQuery } from "@/lib/http";
import { requireContext } from "@/lib/auth/guard";
import { createNote, listNotes, noteInputSchema } from "@/lib/reports/notes";

export const dynamic = "force-dynamic";

const id = z.coerce.number().int().positive();
const query = z
  .object({
    siteId: id.optional(),
    areaId: id.optional(),
    loopId: id.optional(),
    alarmId: id.optional(),
    kind: z.enum(["loop", "alarm", "shift"]).optional(),
    from: isoTime.optional(),
    to: isoTime.optional(),
    limit: z.coerce.number().int().min(1).max(5000).optional(),
  })
  .strict();

export const GET = handle(async (req: Request) => {
  const ctx = await requireContext("viewer");
  const notes = await listNotes(ctx, parseQuery(req, query));
  return NextResponse.json({ notes });
});

export const POST = handle(async (req: Request) => {
  const ctx = await requireContext("operator");
  const note = await createNote(ctx, await parseBody(req, noteInputSchema));
  return NextResponse.json({ note }, { status: 201 });
});
