/** GET /api/loops/:loopId/exports/:exportId — viewer: one assessed historian export with its report. */
import { NextResponse } from "next/server";
import { parseId, handle } from "@/lib/http";
import { requireContext } from "@/lib/auth/guard";
import { getExportAssessment } from "@/lib/export-assessments/service";

export const dynamic = "force-dynamic";

type Params = { params: Promise<{ loopId: string; exportId: string }> };

export const GET = handle(async (_req: Request, { params }: Params) => {
  const ctx = await requireContext("viewer");
  const p = await params;
  return NextResponse.json({ export: await getExportAssessment(ctx, parseId(p.loopId, "loop id"), parseId(p.exportId, "export id")) });
});
