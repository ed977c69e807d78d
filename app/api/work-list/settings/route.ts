/**
 * GET /api/work-list/settings — engineer: the tenant's work-list settings (the sluggish-tuning
 * finding's multiple of the loop's baseline time constant).
 * PUT /api/work-list/settings — admin: { sluggishMultiple, reason } -> the new settings; logged in
 * the configuration change log, effective for the next verdict of each loop.
 */
import { NextResponse } from "next/server";
import { readRoute } from "@/lib/auth/json-route";
import { requireContext } from "@/lib/auth/guard";
import { handle, parseBody } from "@/lib/http";
import { readWorkListSettings, workListSettingsSchema, writeWorkListSettings } from "@/lib/work-list/settings";

export const dynamic = "force-dynamic";

export const GET = readRoute("engineer", async (ctx) => ({ settings: await readWorkListSettings(ctx) }));

export const PUT = handle(async (req: Request) => {
  const ctx = await requireContext("admin");
  const body = await parseBody(req, workListSettingsSchema);
  return NextResponse.json({ settings: await writeWorkListSettings(ctx, body) });
});
