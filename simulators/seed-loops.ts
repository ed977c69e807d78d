/**
 * The demo seed's loops and device credentials in the simulator's own terms: each seeded loop
 * runs the continuous plant `DEMO_PLANTS` gives it, with the tuning read back from the stored
 * row (seconds), its sample periods and ranges. MV in % (the seed's loops use 0..100 % with
 * no narrower limits).
 */
import { DEMO_DEVICES, DEMO_LOOPS, DEMO_PLANTS } from "@/lib/seed/demo";
import type { DeviceCredential } from "./publisher";
import type { InlineLoop } from "./scenario";

export function demoSimLoops(): InlineLoop[] {
  return DEMO_LOOPS.map((loop) => {
    const p = DEMO_PLANTS[loop.tag];
    if (!p) throw new Error(`demo seed: no simulator plant for loop ${loop.tag}`);
    return {
      tenantSlug: loop.tenant,
      siteSlug: loop.site,
      tag: loop.tag,
      telemetryPeriodS: loop.telemetryPeriodS,
      controllerPeriodS: loop.controllerPeriodS,
      plant: p.plant,
      controller: { kp: p.controller.kp, ti: p.controller.ti, td: p.controller.td, tf: p.controller.tf, action: p.controller.action, form: p.controller.form },
      pvRange: [loop.pvLo, loop.pvHi],
      mvRange: [0, 100],
      mvLimitsPct: [0, 100],
      spPct: p.spPct,
      mvPct: p.mvPct,
    };
  });
}

/** The demo device credentials (demo only), keyed "tenantSlug/siteSlug". */
export function demoDeviceCredentials(): Record<string, DeviceCredential> {
  return Object.fromEntries(DEMO_DEVICES.map((d) => [`${d.tenantSlug}/${d.siteSlug}`, { username: d.keyId, password: d.secret, clientId: d.clientId }]));
}
