import { createDevice, createDeviceSchema, listDevices } from "@/lib/data/admin/devices";
import { createRoute, readRoute } from "@/lib/auth/json-route";

export const dynamic = "force-dynamic";

export const GET = readRoute("admin", async (ctx) => ({ devices: await listDevices(ctx) }));

/** Create a device credential: `{ name, siteId, reason? }`; the answer carries the secret, once. */
export const POST = createRoute(
  "admin",
  createDeviceSchema,
  async (ctx, body) => ({ device: await createDevice(ctx, body) }),
  { "cache-control": "no-store" },
);
