/**
 * Shared pieces of the Sparkplug B pipeline tests: the north plant's group, the births of its
 * edge node and device (metrics announced with aliases), the loop mapping, an admin per tenant,
 * and report-by-exception data by alias from the simulated PI loop.
 */
import { DT, type PayloadSpec } from "./encode";
import { PiLoop, type PipelineTenant } from "../pipeline/fixture";
import type { TenantContext } from "@/lib/domain/types";
import type { TestDatabase } from "../setup/db";

export const GROUP = "Acme.North";
export const base = `spBv1.0/${GROUP}`;

export async function createAdmin(db: TestDatabase, t: PipelineTenant): Promise<TenantContext> {
  const u = await db.models.User.create({ email: `admin@${t.slug}.example`, name: `Admin of ${t.slug}`, passwordHash: "x" });
  await db.models.Membership.create({ userId: u.id, tenantId: t.id, role: "admin" });
  return { userId: u.id, email: `admin@${t.slug}.example`, name: "Admin", tenantId: t.id, tenantSlug: t.slug, tenantName: t.slug, role: "admin" };
}

export async function until(cond: () => boolean, ms = 5000): Promise<void> {
  const end = Date.now() + ms;
  while (!cond() && Date.now() < end) await new Promise((r) => setTimeout(r, 10));
}

/** NBIRTH (bdSeq) and DBIRTH of edge-1/plc-1 at time `t0` (ms). */
export const births = (bdSeq: number, t0: number): PayloadSpec[] => [
  { timestamp: t0, seq: 0, metrics: [{ name: "bdSeq", datatype: DT.UInt64, value: bdSeq }] },
  {
    timestamp: t0,
    seq: 1,
    metrics: [
      { name: "FIC101/SP", alias: 11, datatype: DT.Float, value: 40 },
      { name: "FIC101/PV", alias: 12, datatype: DT.Double, value: 40 },
      { name: "FIC101/OUT", alias: 13, datatype: DT.Double, value: 40 },
      { name: "FIC101/MODE", alias: 14, datatype: DT.String, value: "AUTO" },
      { name: "FIC101/TAGNAME", alias: 15, datatype: DT.String, value: "feed flow" },
    ],
  },
];

export const mapping = { loopId: 0, groupId: GROUP, edgeNode: "edge-1", device: "plc-1", sp: "FIC101/SP", pv: "FIC101/PV", mv: "FIC101/OUT", mode: "FIC101/MODE" };

/**
 * `n` seconds of report by exception after `t0`, sequence numbers from 2: PV and MV each second
 * by alias (no name, no datatype), SP only when it moves. Returns the payload specs and the samples.
 */
export function dataByAlias(t0: number, n: number): { specs: PayloadSpec[]; sent: { t: number; sp: number; pv: number; mv: number }[] } {
  const plant = new PiLoop();
  let lastSp = plant.next(t0).sp;
  const specs: PayloadSpec[] = [];
  const sent: { t: number; sp: number; pv: number; mv: number }[] = [];
  for (let i = 1; i <= n; i++) {
    const s = plant.next(t0 + i * 1000);
    const metrics = [
      { alias: 12, timestamp: s.t, value: s.pv, field: "double_value" },
      { alias: 13, timestamp: s.t, value: s.mv, field: "double_value" },
    ];
    if (s.sp !== lastSp) metrics.push({ alias: 11, timestamp: s.t, value: s.sp, field: "float_value" });
    lastSp = s.sp;
    specs.push({ timestamp: s.t, seq: (i + 1) % 256, metrics });
    sent.push(s);
  }
  return { specs, sent };
}
