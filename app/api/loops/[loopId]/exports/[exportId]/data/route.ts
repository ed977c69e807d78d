/** GET /api/loops/:loopId/exports/:exportId/data — viewer: the uploaded export, byte for byte. */
import { csvAttachment, parseId, handle } from "@/lib/http";
import { requireContext } from "@/lib/auth/guard";
import { getExportData } from "@/lib/export-assessments/service";

export const dynamic = "force-dynamic";

type Params = { params: Promise<{ loopId: string; exportId: string }> };

export const GET = handle(async (_req: Request, { params }: Params) => {
  const ctx = await requireContext("viewer");
  const p = await params;
  const { filename, bytes } = await getExportData(ctx, parseId(p.loopId, "loop id"), parseId(p.exportId, "export id"));
  return csvAttachment(filename, bytes);
});
