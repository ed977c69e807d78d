/**
 * The simulators' Sparkplug B mode speaks what the host reads: their births and report-by-exception
 * DDATA (encoded by the sparkplug-payload codec on the simulator side) decode through the host's
 * state machine and resampler into the samples that were simulated. A consistency check between
 * the two ends of the demo; the decoder itself is checked against python3-protobuf in state.test.ts.
 */
import { describe, expect, it } from "vitest";
import { SIM_METRICS, simulatorSparkplugIds } from "@/lib/domain/sparkplug";
import { decodeSparkplugPayload } from "@/server/sparkplug/payload";
import { LoopResampler, type HeldSample } from "@/server/sparkplug/resample";
import { SparkplugNodes } from "@/server/sparkplug/state";
import { parseSparkplugTopic } from "@/server/sparkplug/topic";
import { encodeSparkplug, sampleMetrics } from "@/simulators/sparkplug-publisher";

describe("simulators' Sparkplug B mode", () => {
  it("gives back the simulated samples after birth, DDATA by alias and resampling", () => {
    const ids = simulatorSparkplugIds("vantrell", "marrow-fen", "fic-101");
    expect(ids).toEqual({ groupId: "vantrell", edgeNode: "sim-marrow-fen", device: "fic-101" });
    const nodes = new SparkplugNodes();
    const feed = (type: string, device: string, body: Buffer, at: number) => {
      const d = decodeSparkplugPayload(body);
      if (!d.ok) throw new Error(d.reason);
      return nodes.handle(parseSparkplugTopic(`spBv1.0/${ids.groupId}/${type}/${ids.edgeNode}${device ? `/${device}` : ""}`)!, d.payload, at);
    };
    const t0 = Date.UTC(2026, 11, 2, 9, 0, 0);
    feed("NBIRTH", "", encodeSparkplug({ timestamp: t0, seq: 0, metrics: [{ name: "bdSeq", type: "UInt64", value: 4 }] }), t0);
    const sims = Array.from({ length: 6 }, (_, i) => ({ t: t0 + i * 1000, sp: i < 3 ? 50 : 55, pv: 48 + i * 0.25, mv: i === 2 ? 30 : 31, mode: "auto" }));
    const r = new LoopResampler({ loopId: 1, tenantId: 1, ...ids, sp: "SP", pv: "PV", mv: "MV", mode: "MODE" }, 1000);
    const got: HeldSample[] = [];
    let prev = null;
    let seq = 1;
    for (const s of sims) {
      const metrics = sampleMetrics(s, prev);
      if (prev) expect(metrics.every((m) => m.name === undefined && SIM_METRICS.some((x) => x.alias === m.alias))).toBe(true);
      const out = feed(prev ? "DDATA" : "DBIRTH", ids.device, encodeSparkplug({ timestamp: s.t, seq: seq++, metrics }), s.t);
      expect(out.problems).toEqual({});
      for (const ev of out.events) if (ev.kind === "values") got.push(...r.apply(ev.updates));
      prev = s;
    }
    // the samples come back at their own times (the grid is whole seconds, as the sample times are)
    expect(got).toEqual(sims.map((s) => ({ t: s.t, sp: s.sp, pv: s.pv, mv: s.mv, mode: "auto" })));
  });
});
