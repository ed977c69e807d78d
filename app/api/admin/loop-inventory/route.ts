/**
 * GET /api/admin/loop-inventory — the tenant's loops as an inventory CSV (engineer).
 * POST — import a sheet in the same format: `{ csv, commit: false }` previews (every issue with its
 * line, defaults shown, nothing saved); `{ csv, commit: true, reason }` saves all loops or none.
 */
import { NextResponse } from "next/server";
import { requireContext } from "@/lib/auth/guard";
import { handle, parseBody } from "@/lib/http";
import { commitInventoryImport, exportInventoryCsv, importRequestSchema, previewInventoryImport } from "@/lib/data/admin/loop-import";
import { INVENTORY_IMPORT_BODY } from "@/lib/admin/inventory-limits";

export const dynamic = "force-dynamic";

export const GET = handle(async () => {
  const ctx = await requireContext("engineer");
  const csv = await exportInventoryCsv(ctx);
  const day = new Date().toISOString().slice(0, 10);
  return new NextResponse(csv, {
    headers: {
      "content-type": "text/csv; charset=utf-8",
      "content-disposition": `attachment; filename="loop-inventory-${ctx.tenantSlug}-${day}.csv"`,
      "cache-control": "no-store",
    },
  });
});

export const POST = handle(async (req: Request) => {
  const ctx = await requireContext("engineer");
  const body = await parseBody(req, importRequestSchema);
  if (!body.commit) return NextResponse.json(await previewInventoryImport(ctx, body.csv));
  return NextResponse.json(await commitInventoryImport(ctx, body), { status: 201 });
}, INVENTORY_IMPORT_BODY);
