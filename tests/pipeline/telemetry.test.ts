import { describe, expect, it } from "vitest";
import { isSlug, slugify } from "@/lib/domain/slug";
import {
  MAX_PAYLOAD_BYTES,
  decodePayload,
  parseTelemetryTopic,
  telemetryTopic,
  validateSample,
} from "@/lib/domain/telemetry";
import { FrameGuard } from "@/server/broker/frame-guard";
import { topicMatches } from "@/server/broker/topic-match";

// Cases below restate docs/architecture.md §5 (the telemetry contract) and the MQTT 3.1.1 standard
// (OASIS, 2014), sections named beside each check.

describe("slugify maps tags to topic segments", () => {
  it.each([
    ["FIC-101", "fic-101"],
    ["TIC 2.04/B", "tic-2-04-b"],
    ["  --LIC__7--  ", "lic-7"],
    ["Kühlwasser Süd", "kuhlwasser-sud"],
    ["###", ""],
  ])("slugify(%j) is %j", (tag, slug) => {
    expect(slugify(tag)).toBe(slug);
  });

  it("produces only valid slugs for non-empty results", () => {
    for (const s of ["A", "a b c", "x--y", "9/9", "Über-Δ 1"]) {
      const out = slugify(s);
      if (out) expect(isSlug(out)).toBe(true);
    }
    expect(isSlug("Fic-101")).toBe(false);
    expect(isSlug("-a")).toBe(false);
    expect(isSlug("a--b")).toBe(false);
    expect(isSlug("")).toBe(false);
  });
});

describe("telemetry topics", () => {
  it("round-trips a well-formed topic", () => {
    const t = { tenantSlug: "acme", siteSlug: "north", loopSlug: "fic-101" };
    expect(parseTelemetryTopic(telemetryTopic(t))).toEqual(t);
  });
  it.each(["rg/acme/north/fic-101", "rg/acme/north/fic-101/samples/x", "xx/acme/north/fic-101/samples", "rg/ACME/north/f/samples", "rg//north/f/samples", "rg/+/north/f/samples"])(
    "rejects %j",
    (topic) => {
      expect(parseTelemetryTopic(topic)).toBeNull();
    },
  );
  // MQTT 3.1.1 §4.7.1: '+' matches one level, '#' the remaining levels including none.
  it.each([
    ["rg/+/+/+/samples", "rg/a/b/c/samples", true],
    ["rg/+/+/+/samples", "rg/a/b/samples", false],
    ["rg/#", "rg/a/b/c/samples", true],
    ["rg/#", "rg", true],
    ["rg/a/#", "rg/b/c", false],
  ])("filter %j vs %j is %j", (f, t, m) => {
    expect(topicMatches(f, t)).toBe(m);
  });
});

describe("payload decoding and sample validation", () => {
  const good = { t: 1767600000000, sp: 50, pv: 49.5, mv: 31.2, mode: "auto" };

  it("accepts one object or an array of objects", () => {
    expect(decodePayload(JSON.stringify(good))).toEqual({ ok: true, items: [good] });
    expect(decodePayload(JSON.stringify([good, good]))).toMatchObject({ ok: true });
    expect(validateSample(good)).toEqual({ ok: true, sample: good });
  });

  it("refuses a body over 64 KiB before parsing it (even if it is not JSON)", () => {
    const big = "x".repeat(MAX_PAYLOAD_BYTES + 1);
    expect(decodePayload(big)).toEqual({ ok: false, reason: "too-large" });
    expect(decodePayload(Buffer.alloc(MAX_PAYLOAD_BYTES + 1, 0x5b))).toEqual({ ok: false, reason: "too-large" });
  });

  it.each([
    ["an empty body", "", "bad-json"],
    ["a truncated object", "{", "bad-json"],
    ["a bare NaN", "NaN", "bad-json"],
    ["a string", '"text"', "bad-shape"],
    ["a number", "42", "bad-shape"],
    ["null", "null", "bad-shape"],
    ["an empty array", "[]", "bad-shape"],
    ["501 samples", JSON.stringify(new Array(501).fill(good)), "too-many-samples"],
  ] as const)("refuses %s as %s", (_label, body, reason) => {
    expect(decodePayload(body)).toEqual({ ok: false, reason });
  });

  it("takes deep nesting as one item and then refuses that item's shape", () => {
    const r = decodePayload("[".repeat(20000) + "]".repeat(20000));
    expect(r.ok).toBe(true);
    if (r.ok) {
      expect(r.items).toHaveLength(1);
      expect(validateSample(r.items[0])).toEqual({ ok: false, reason: "bad-shape" });
    }
  });

  it.each([
    [{ ...good, pv: null }, "non-finite"],
    [{ ...good, sp: "NaN" }, "non-finite"],
    [{ ...good, mv: "-Infinity" }, "non-finite"],
    [{ ...good, t: 1e999 }, "non-finite"],
    [{ ...good, pv: "49.5" }, "bad-shape"],
    [{ ...good, mode: "AUTO" }, "bad-shape"],
    [{ ...good, mode: undefined }, "bad-shape"],
    [{ ...good, t: 1767600000000.5 }, "bad-shape"],
    [{ ...good, t: -1 }, "bad-shape"],
    [{ sp: 1, pv: 2, mv: 3, mode: "auto" }, "bad-shape"],
    [[good], "bad-shape"],
    ["x", "bad-shape"],
  ] as const)("sample case %# is rejected", (sample, reason) => {
    expect(validateSample(sample)).toEqual({ ok: false, reason });
  });

  it("parses 1e999 to Infinity and counts it non-finite (JSON number grammar, RFC 8259 §6)", () => {
    const r = decodePayload('{"t":1,"sp":1e999,"pv":0,"mv":0,"mode":"manual"}');
    expect(r.ok).toBe(true);
    if (r.ok) expect(validateSample(r.items[0])).toEqual({ ok: false, reason: "non-finite" });
  });
});

describe("FrameGuard reads MQTT Remaining Length (MQTT 3.1.1 §2.2.3)", () => {
  function header(type: number, len: number): Buffer {
    const bytes = [type << 4];
    let x = len;
    do {
      let b = x % 128;
      x = Math.floor(x / 128);
      if (x > 0) b |= 0x80;
      bytes.push(b);
    } while (x > 0);
    return Buffer.from(bytes);
  }

  it("encodes 321 as 0xC1 0x02 (the standard's own example: 321 = 65 + 2*128)", () => {
    expect([...header(3, 321).subarray(1)]).toEqual([0xc1, 0x02]);
  });

  it("lets packets under the limit through, across arbitrary chunk boundaries", () => {
    const violations: number[] = [];
    const g = new FrameGuard(1000, (_w, n) => violations.push(n));
    const stream = Buffer.concat([header(3, 300), Buffer.alloc(300), header(12, 0), header(3, 1000), Buffer.alloc(1000)]);
    for (let i = 0; i < stream.length; i += 7) g.push(stream.subarray(i, i + 7));
    expect(violations).toEqual([]);
  });

  it("reports an oversized packet as soon as its header is complete", () => {
    const violations: number[] = [];
    const g = new FrameGuard(1000, (_w, n) => violations.push(n));
    const h = header(3, 200_000);
    expect(g.push(h.subarray(0, 2))).toBe(true);
    expect(g.push(h.subarray(2))).toBe(false);
    expect(violations).toEqual([200_000]);
  });

  it("reports a Remaining Length longer than four bytes as malformed", () => {
    const why: string[] = [];
    const g = new FrameGuard(1e9, (w) => why.push(w));
    g.push(Buffer.from([0x30, 0xff, 0xff, 0xff, 0xff, 0x7f]));
    expect(why).toEqual(["malformed"]);
  });
});
