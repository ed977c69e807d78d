/**
 * The Sparkplug B decoder and edge-node state machine against payloads encoded by Python's
 * protobuf runtime from sparkplug_b.proto (encode.py), not by the codec the product uses. The
 * rules checked are those of the Eclipse Sparkplug 3.0 specification as recalled from memory:
 * NBIRTH seq 0 and a bdSeq metric, seq +1 mod 256 on every later message of the edge node except
 * NDEATH, aliases declared in the birth and used alone in data, an NDEATH carrying the bdSeq of
 * the session it ends, is_historical for store-and-forward data, metric timestamps as sample times.
 */
import { describe, expect, it } from "vitest";
import { decodeSparkplugPayload } from "@/server/sparkplug/payload";
import { LoopResampler, modeOf } from "@/server/sparkplug/resample";
import { SparkplugNodes, type SparkplugEvent } from "@/server/sparkplug/state";
import { parseSparkplugTopic, type SparkplugTopic } from "@/server/sparkplug/topic";
import { DT, encodeWithPython, type PayloadSpec } from "./encode";

const T0 = Date.UTC(2026, 11, 2, 8, 0, 0);
const topic = (s: string): SparkplugTopic => parseSparkplugTopic(s)!;
const nbirth = (bdSeq: number, seq = 0): PayloadSpec => ({ timestamp: T0, seq, metrics: [{ name: "bdSeq", datatype: DT.UInt64, value: bdSeq }, { name: "Node Control/Rebirth", alias: 100, datatype: DT.Boolean, value: false }] });
const dbirth = (seq: number): PayloadSpec => ({
  timestamp: T0,
  seq,
  metrics: [
    { name: "FIC101/SP", alias: 1, datatype: DT.Float, value: 42.5 },
    { name: "FIC101/PV", alias: 2, datatype: DT.Double, value: 41.25 },
    { name: "FIC101/OUT", alias: 3, datatype: DT.Double, value: 37 },
    { name: "FIC101/MODE", alias: 4, datatype: DT.String, value: "AUTO" },
    { name: "FIC101/ALM", alias: 5, datatype: DT.Int32, value: -3 },
  ],
});

function run(nodes: SparkplugNodes, msgs: [string, PayloadSpec][], receivedAt = T0 + 60_000) {
  const bufs = encodeWithPython(msgs.map((m) => m[1]));
  return msgs.map(([t], i) => {
    const d = decodeSparkplugPayload(bufs[i]!);
    if (!d.ok) throw new Error(`decode failed: ${d.reason}`);
    return nodes.handle(topic(t), d.payload, receivedAt);
  });
}
const values = (evs: SparkplugEvent[]) => evs.flatMap((e) => (e.kind === "values" ? e.updates : []));

describe("Sparkplug B topics", () => {
  it("parses edge node and device topics and refuses the rest", () => {
    expect(parseSparkplugTopic("spBv1.0/North.Works/DDATA/edge-1/plc:7")).toEqual({ groupId: "North.Works", type: "DDATA", edgeNode: "edge-1", device: "plc:7" });
    expect(parseSparkplugTopic("spBv1.0/g/NBIRTH/e")).toEqual({ groupId: "g", type: "NBIRTH", edgeNode: "e", device: "" });
    for (const bad of ["spBv1.0/g/NBIRTH/e/d", "spBv1.0/g/DDATA/e", "spBv1.0/STATE/host", "spBv1.0/g/XDATA/e", "spAv1.0/g/NDATA/e", "spBv1.0/g h/NDATA/e"]) expect(parseSparkplugTopic(bad)).toBeNull();
  });
});

describe("Sparkplug B edge-node state (payloads encoded by python3-protobuf)", () => {
  it("registers metrics and aliases from births and decodes data by alias with the metric timestamps", () => {
    const nodes = new SparkplugNodes();
    const [nb, db, dd] = run(nodes, [
      ["spBv1.0/G1/NBIRTH/E1", nbirth(7)],
      ["spBv1.0/G1/DBIRTH/E1/D1", dbirth(1)],
      // data by alias only: no name, no datatype (Sparkplug 3.0: datatype is for births)
      ["spBv1.0/G1/DDATA/E1/D1", { timestamp: T0 + 5000, seq: 2, metrics: [{ alias: 2, timestamp: T0 + 4000, value: 43.5, field: "double_value" }, { alias: 5, value: -7, field: "int_value" }] }],
    ]);
    expect(nb!.events[0]).toMatchObject({ kind: "birth", record: { bdSeq: 7, device: "" } });
    expect(db!.events[0]).toMatchObject({ kind: "birth", record: { device: "D1", metrics: expect.arrayContaining([expect.objectContaining({ name: "FIC101/SP", alias: 1, datatype: DT.Float, value: 42.5 })]) } });
    expect(values(db!.events).map((u) => [u.name, u.value])).toContainEqual(["FIC101/MODE", "AUTO"]);
    expect(dd!.problems).toEqual({});
    // Int32 -7 travels as a uint32 (two's complement) and comes back signed
    expect(values(dd!.events)).toEqual([
      { name: "FIC101/PV", t: T0 + 4000, value: 43.5, historical: false },
      { name: "FIC101/ALM", t: T0 + 5000, value: -7, historical: false },
    ]);
  });

  it("counts a sequence gap and an unknown alias and marks the source as needing a rebirth, decoding the rest", () => {
    const nodes = new SparkplugNodes();
    const outs = run(nodes, [
      ["spBv1.0/G1/NBIRTH/E1", nbirth(1)],
      ["spBv1.0/G1/DBIRTH/E1/D1", dbirth(1)],
      ["spBv1.0/G1/DDATA/E1/D1", { seq: 4, metrics: [{ alias: 2, value: 40, field: "double_value" }] }],
      ["spBv1.0/G1/DDATA/E1/D1", { seq: 5, metrics: [{ alias: 99, value: 1, field: "double_value" }, { alias: 3, value: 12, field: "double_value" }] }],
    ]);
    expect(outs[2]!.problems).toEqual({ "sp-seq-gap": 1 });
    expect(values(outs[2]!.events).map((u) => u.value)).toEqual([40]);
    expect(nodes.find("G1", "E1", "")!.needsRebirth).toBe("sequence gap: expected 2, got 4");
    expect(outs[3]!.problems).toEqual({ "sp-unknown-alias": 1 });
    expect(values(outs[3]!.events).map((u) => [u.name, u.value])).toEqual([["FIC101/OUT", 12]]);
    expect(nodes.find("G1", "E1", "D1")!.needsRebirth).toBe("unknown alias 99");
    // the seq wraps after 255 (mod 256) without a gap
    const wrap = new SparkplugNodes();
    const specs: [string, PayloadSpec][] = [["spBv1.0/G1/NBIRTH/E1", nbirth(1)]];
    for (let i = 1; i <= 258; i++) specs.push(["spBv1.0/G1/NDATA/E1", { seq: i % 256, metrics: [{ alias: 100, value: false, field: "boolean_value" }] }]);
    expect(run(wrap, specs).every((o) => Object.keys(o.problems).length === 0)).toBe(true);
  });

  it("ignores an NDEATH whose bdSeq is not the current session's, and ends node and devices on the right one", () => {
    const nodes = new SparkplugNodes();
    const outs = run(nodes, [
      ["spBv1.0/G1/NBIRTH/E1", nbirth(3)],
      ["spBv1.0/G1/DBIRTH/E1/D1", dbirth(1)],
      ["spBv1.0/G1/NDEATH/E1", { metrics: [{ name: "bdSeq", datatype: DT.UInt64, value: 2 }] }],
      ["spBv1.0/G1/NDEATH/E1", { metrics: [{ name: "bdSeq", datatype: DT.UInt64, value: 3 }] }],
      ["spBv1.0/G1/DDATA/E1/D1", { seq: 2, metrics: [{ alias: 2, value: 40, field: "double_value" }] }],
    ]);
    expect(outs[2]!).toEqual({ events: [], problems: { "sp-stale-death": 1 } });
    expect(outs[3]!.events).toEqual([{ kind: "death", groupId: "G1", edgeNode: "E1", devices: ["", "D1"], at: T0 + 60_000 }]);
    expect(nodes.find("G1", "E1", "D1")!.deadAt).toBe(T0 + 60_000);
    // data after the death and before a new birth is not decoded
    expect(outs[4]!.problems).toEqual({ "sp-no-birth": 1 });
    expect(values(outs[4]!.events)).toEqual([]);
  });

  it("passes is_historical samples as history and refuses births without datatypes or with a repeated alias", () => {
    const nodes = new SparkplugNodes();
    const outs = run(nodes, [
      ["spBv1.0/G1/NBIRTH/E1", nbirth(1)],
      ["spBv1.0/G1/DBIRTH/E1/D1", dbirth(1)],
      ["spBv1.0/G1/DDATA/E1/D1", { seq: 2, metrics: [{ alias: 2, timestamp: T0 - 30_000, value: 39, field: "double_value", is_historical: true }] }],
      ["spBv1.0/G1/DBIRTH/E1/D2", { seq: 3, metrics: [{ name: "a", alias: 1, datatype: DT.Double, value: 1 }, { name: "b", alias: 1, datatype: DT.Double, value: 2 }] }],
      ["spBv1.0/G1/DBIRTH/E1/D3", { seq: 4, metrics: [{ name: "a", alias: 1, value: 1, field: "double_value" }] }],
    ]);
    expect(values(outs[2]!.events)).toEqual([{ name: "FIC101/PV", t: T0 - 30_000, value: 39, historical: true }]);
    // a historical value does not replace the held (newer) one
    expect(nodes.find("G1", "E1", "D1")!.metrics.find((m) => m.name === "FIC101/PV")!.value).toBe(41.25);
    expect(outs[3]!.problems).toEqual({ "sp-bad-birth": 1 });
    expect(outs[4]!.problems).toEqual({ "sp-bad-birth": 1 });
    expect(nodes.find("G1", "E1", "D2")).toBeNull();
  });

  it("counts a value whose protobuf field does not fit the metric's datatype", () => {
    const nodes = new SparkplugNodes();
    const outs = run(nodes, [
      ["spBv1.0/G1/NBIRTH/E1", nbirth(1)],
      ["spBv1.0/G1/DBIRTH/E1/D1", dbirth(1)],
      ["spBv1.0/G1/DDATA/E1/D1", { seq: 2, metrics: [{ alias: 2, value: "41.0", field: "string_value" }, { alias: 1, value: 44, field: "float_value" }] }],
    ]);
    expect(outs[2]!.problems).toEqual({ "sp-bad-metric": 1 });
    expect(values(outs[2]!.events).map((u) => [u.name, u.value])).toEqual([["FIC101/SP", 44]]);
  });

  it("restores persisted births: data by alias after a restart decodes, the first seq is the new baseline", () => {
    const before = new SparkplugNodes();
    run(before, [
      ["spBv1.0/G1/NBIRTH/E1", nbirth(9)],
      ["spBv1.0/G1/DBIRTH/E1/D1", dbirth(1)],
    ]);
    const after = new SparkplugNodes();
    after.restore(JSON.parse(JSON.stringify(before.records())));
    const [dd, death] = run(after, [
      ["spBv1.0/G1/DDATA/E1/D1", { seq: 17, metrics: [{ alias: 2, value: 45, field: "double_value" }] }],
      ["spBv1.0/G1/NDEATH/E1", { metrics: [{ name: "bdSeq", datatype: DT.UInt64, value: 9 }] }],
    ]);
    expect(dd!.problems).toEqual({});
    expect(values(dd!.events).map((u) => [u.name, u.value])).toEqual([["FIC101/PV", 45]]);
    expect(death!.events[0]).toMatchObject({ kind: "death", devices: ["", "D1"] });
  });
});

describe("report by exception, resampled to the loop's period", () => {
  const mapping = { loopId: 1, tenantId: 1, groupId: "G1", edgeNode: "E1", device: "D1", sp: "SP", pv: "PV", mv: "MV", mode: "MODE" };
  it("holds the last values (a set point from the birth only) and samples them on the period's grid", () => {
    const r = new LoopResampler(mapping, 1000);
    expect(r.apply([{ name: "SP", t: T0, value: 50 }, { name: "PV", t: T0, value: 48 }])).toEqual([]); // no MV yet
    expect(r.apply([{ name: "MV", t: T0 + 200, value: 30 }])).toEqual([]);
    // PV changes at +2.5 s: grid points 1 s and 2 s carry the old PV, 3 s and 4 s the new one
    const out = r.apply([{ name: "PV", t: T0 + 2500, value: 49 }]);
    expect(out).toEqual([
      { t: T0 + 1000, sp: 50, pv: 48, mv: 30, mode: "auto" },
      { t: T0 + 2000, sp: 50, pv: 48, mv: 30, mode: "auto" },
    ]);
    expect(r.advance(T0 + 4000).map((s) => [s.t - T0, s.pv])).toEqual([[3000, 49], [4000, 49]]);
    expect(r.apply([{ name: "MODE", t: T0 + 4100, value: 0 }]).length).toBe(0);
    expect(r.advance(T0 + 5000)).toEqual([{ t: T0 + 5000, sp: 50, pv: 49, mv: 30, mode: "manual" }]);
    // after a death nothing is filled up to it
    r.reset(T0 + 60_000);
    expect(r.advance(T0 + 60_000)).toEqual([]);
    expect(r.advance(T0 + 61_000).map((s) => s.t - T0)).toEqual([61_000]);
  });

  it("reads modes from strings, booleans and 0/1/2", () => {
    expect([modeOf("AUTO"), modeOf("Cascade"), modeOf(true), modeOf(false), modeOf(0), modeOf(1), modeOf(2), modeOf(3), modeOf("hand")]).toEqual(["auto", "cascade", "auto", "manual", "manual", "auto", "cascade", null, null]);
  });
});
