/**
 * An invented fixture for the pipeline suites: two tenants ("acme-test", "brix-test") with one
 * site, one loop (FIC-101, 1 s telemetry, PI tuning) and one site-bound device each.
 */
import type { Models } from "@/models";
import { hashDeviceSecret } from "@/lib/devices";
import { TEST_PEPPER } from "./helpers";
import { testLoopRow } from "@/tests/helpers/loop-row";

export interface PipelineTenant {
  id: number;
  slug: string;
  siteId: number;
  siteSlug: string;
  loopId: number;
  device: { keyId: string; secret: string; clientId: string };
}

async function tenant(m: Models, slug: string): Promise<PipelineTenant> {
  const t = await m.Tenant.create({ slug, name: `${slug} Works` });
  const site = await m.Site.create({ tenantId: t.id, slug: "north", name: "North Plant" });
  const loop = await m.Loop.create(
    testLoopRow({ tenantId: t.id, siteId: site.id, areaId: null }, {
      description: "Feed flow",
      gainValue: 0.5,
      tiValue: 8,
      // The fixture plant is first order: a first-order ARX keeps the regressors well conditioned.
      na: 1,
      nb: 1,
      nk: 1,
    }),
  );
  const device = { keyId: `${slug}-gw1`, secret: `${slug}-device-secret-0123456789`, clientId: `${slug}-gw1` };
  await m.DeviceCredential.create({
    tenantId: t.id,
    siteId: site.id,
    name: `${slug} gateway`,
    clientId: device.clientId,
    keyId: device.keyId,
    secretHash: hashDeviceSecret(device.secret, TEST_PEPPER),
    createdBy: null,
  });
  return { id: t.id, slug, siteId: site.id, siteSlug: "north", loopId: loop.id, device };
}

export async function createPipelineFixture(m: Models): Promise<{ a: PipelineTenant; b: PipelineTenant }> {
  return { a: await tenant(m, "acme-test"), b: await tenant(m, "brix-test") };
}

/**
 * A first-order plant under discrete PI control with set-point steps (enough excitation for the
 * estimator): y(k+1) = a y(k) + (1 - a) g u(k) + small deterministic disturbance.
 */
export class PiLoop {
  y = 40;
  u = 40;
  private integ = 40;
  private k = 0;
  constructor(
    private readonly a = 0.9,
    private readonly g = 1,
    private readonly kp = 0.5,
    private readonly ti = 8,
  ) {}
  next(t: number): { t: number; sp: number; pv: number; mv: number; mode: "auto" } {
    // Set-point steps every 20 s over four levels, and a small deterministic dither on MV.
    const sp = [40, 55, 45, 60][Math.floor(this.k / 20) % 4]!;
    const e = sp - this.y;
    this.integ += (this.kp * e) / this.ti;
    const dither = 1.5 * Math.sign(Math.sin(this.k * 2.1 + Math.sin(this.k * 0.7)));
    this.u = Math.min(100, Math.max(0, this.kp * e + this.integ + dither));
    const d = 0.3 * Math.sin(this.k * 0.37) + 0.2 * Math.sin(this.k * 1.3);
    this.y = this.a * this.y + (1 - this.a) * this.g * this.u + 0.05 * d;
    this.k++;
    return { t, sp, pv: this.y, mv: this.u, mode: "auto" };
  }
}
