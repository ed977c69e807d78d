import { NextResponse } from "next/server";
import { createDevice, createDeviceSchema, listDevices } from "@/lib/data/admin/devices";
import { requireContext } from "@/lib/auth/guard";
import { handle, parseBody } from "@/lib/http";

export const dynamic = "force-dynamic";

export const GET = handle(async () => {
  const ctx = await requireContext("admin");
  return NextResponse.json({ devices: await listDevices(ctx) });
});

/** Create a device credential: `{ name, siteId, reason? }`; the answer carries the secret, once. */
export const POST = handle(async (req: Request) => {
  const ctx = await requireContext("admin");
  const body = await parseBody(req, createDeviceSchema);
  return NextResponse.json({ device: await createDevice(ctx, body) }, { status: 201, headers: { "cache-control": "no-store" } });
});
