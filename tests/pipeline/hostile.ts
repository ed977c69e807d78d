/**
 * Hostile telemetry for the ingest fuzz suites (fast-check arbitraries). Each generated message
 * carries the outcome the telemetry contract (docs/architecture.md §5) prescribes for it; sample times
 * are placeholders resolved against a per-loop cursor when the message is sent, so duplicate,
 * out-of-order and future samples are exact.
 */
import fc from "fast-check";
import type { RejectReason } from "@/lib/domain/telemetry";

export type SampleKind =
  | { kind: "valid"; sp: number; pv: number; mv: number; mode: string }
  | { kind: "duplicate" }
  | { kind: "out-of-order"; back: number }
  | { kind: "future"; ahead: number }
  | { kind: "non-finite"; field: "t" | "sp" | "pv" | "mv"; literal: string }
  | { kind: "bad-shape"; variant: number; junk: string };

export type HostileMessage =
  | { kind: "samples"; loop: number; items: SampleKind[]; asArray: boolean }
  | { kind: "raw"; loop: number; body: string | Uint8Array; label: string }
  | { kind: "unknown-loop"; items: SampleKind[] };

const finite = fc.double({ noNaN: true, noDefaultInfinity: true, min: -1e6, max: 1e6 });
const mode = fc.constantFrom("auto", "manual", "cascade");

export const sampleKind: fc.Arbitrary<SampleKind> = fc.oneof(
  { weight: 6, arbitrary: fc.record({ kind: fc.constant("valid" as const), sp: finite, pv: finite, mv: finite, mode }) },
  { weight: 1, arbitrary: fc.constant({ kind: "duplicate" as const }) },
  { weight: 1, arbitrary: fc.record({ kind: fc.constant("out-of-order" as const), back: fc.integer({ min: 1, max: 10_000_000 }) }) },
  { weight: 1, arbitrary: fc.record({ kind: fc.constant("future" as const), ahead: fc.integer({ min: 5_001, max: 1e11 }) }) },
  {
    weight: 1,
    arbitrary: fc.record({
      kind: fc.constant("non-finite" as const),
      field: fc.constantFrom("t" as const, "sp" as const, "pv" as const, "mv" as const),
      literal: fc.constantFrom("1e999", "-1e999", "null", '"NaN"', '"Infinity"', '"-inf"'),
    }),
  },
  { weight: 2, arbitrary: fc.record({ kind: fc.constant("bad-shape" as const), variant: fc.integer({ min: 0, max: 11 }), junk: fc.string({ maxLength: 12 }) }) },
);

const notJson = fc.oneof(fc.string({ maxLength: 200 }), fc.uint8Array({ maxLength: 200 }).map((a) => Buffer.from(a))).filter((b) => {
  try {
    JSON.parse(typeof b === "string" ? b : b.toString("utf8"));
    return false;
  } catch {
    return true;
  }
});

export function hostileMessage(loops: number): fc.Arbitrary<HostileMessage> {
  const loop = fc.integer({ min: 0, max: loops - 1 });
  return fc.oneof(
    { weight: 12, arbitrary: fc.record({ kind: fc.constant("samples" as const), loop, items: fc.array(sampleKind, { minLength: 1, maxLength: 8 }), asArray: fc.boolean() }) },
    { weight: 2, arbitrary: fc.record({ kind: fc.constant("raw" as const), loop, body: notJson, label: fc.constant("not JSON") }) },
    {
      weight: 1,
      arbitrary: fc.record({
        kind: fc.constant("raw" as const),
        loop,
        body: fc.oneof(fc.integer(), fc.string({ maxLength: 30 }), fc.boolean(), fc.constant(null), fc.double()).map((v) => JSON.stringify(v)),
        label: fc.constant("JSON, not an object"),
      }),
    },
    { weight: 1, arbitrary: fc.record({ kind: fc.constant("raw" as const), loop, body: fc.constant("[]"), label: fc.constant("empty array") }) },
    {
      weight: 1,
      arbitrary: fc.record({
        kind: fc.constant("raw" as const),
        loop,
        // Both shapes stay under 64 KiB: 2 bytes per level for arrays, 6 for objects.
        body: fc.tuple(fc.integer({ min: 2, max: 10_000 }), fc.boolean()).map(([d, arr]) => (arr ? "[".repeat(2 * d) + "]".repeat(2 * d) : '{"a":'.repeat(d) + "1" + "}".repeat(d))),
        label: fc.constant("deep nesting"),
      }),
    },
    {
      weight: 1,
      arbitrary: fc.record({
        kind: fc.constant("raw" as const),
        loop,
        body: fc.tuple(fc.integer({ min: 501, max: 1400 }), fc.constantFrom("0", '{"t":1,"sp":0,"pv":0,"mv":0,"mode":"auto"}')).map(([n, el]) => "[" + new Array(n).fill(el).join(",") + "]"),
        label: fc.constant("more than 500 samples"),
      }),
    },
    {
      weight: 1,
      arbitrary: fc.record({
        kind: fc.constant("raw" as const),
        loop,
        body: fc.integer({ min: 64 * 1024 + 1, max: 64 * 1024 + 400 }).map((n) => "[" + " ".repeat(n - 2) + "]"),
        label: fc.constant("over 64 KiB"),
      }),
    },
    { weight: 1, arbitrary: fc.record({ kind: fc.constant("unknown-loop" as const), items: fc.array(sampleKind, { minLength: 1, maxLength: 3 }) }) },
  );
}

const numText = (v: number) => JSON.stringify(v);

function badShape(variant: number, junk: string, t: number): string {
  const j = JSON.stringify(junk);
  switch (variant) {
    case 0: return `{"sp":1,"pv":1,"mv":1,"mode":"auto"}`; // no t
    case 1: return `{"t":${t},"pv":1,"mv":1,"mode":"auto"}`; // no sp
    case 2: return `{"t":${t},"sp":1,"pv":${JSON.stringify("#" + junk)},"mv":1,"mode":"auto"}`; // string PV
    case 3: return `{"t":${t},"sp":1,"pv":1,"mv":true,"mode":"auto"}`;
    case 4: return `{"t":${t},"sp":1,"pv":1,"mv":1,"mode":${JSON.stringify("x" + junk)}}`;
    case 5: return `{"t":${t + 0.5},"sp":1,"pv":1,"mv":1,"mode":"auto"}`;
    case 6: return `{"t":-5,"sp":1,"pv":1,"mv":1,"mode":"auto"}`;
    case 7: return `[${t},1,1,1,"auto"]`;
    case 8: return j;
    case 9: return `{"t":${t},"sp":{"v":1},"pv":1,"mv":1,"mode":"auto"}`;
    case 10: return `{"t":"${t}","sp":1,"pv":1,"mv":1,"mode":"auto"}`;
    default: return `{"t":${t},"sp":1,"pv":1,"mv":1}`; // no mode
  }
}

/** The per-loop state the runner keeps: the last accepted time and the last accepted body. */
export interface LoopCursor {
  lastT: number;
  lastBody: string | null;
  lastFirstT: number | null;
  lastCount: number;
}

export interface Expected {
  accepted: number[];
  reasons: Partial<Record<RejectReason, number>>;
  redelivered: number;
}

/**
 * Render a samples message against the cursor and say what the contract expects of it.
 * Mutates the cursor as ingest should (valid samples move it forward by 1 ms each).
 */
export function renderSamples(items: SampleKind[], asArray: boolean, cur: LoopCursor, now: number): { body: string; expected: Expected } {
  const parts: string[] = [];
  const expected: Expected = { accepted: [], reasons: {}, redelivered: 0 };
  const add = (r: RejectReason) => (expected.reasons[r] = (expected.reasons[r] ?? 0) + 1);
  let last = cur.lastT;
  for (const it of items) {
    switch (it.kind) {
      case "valid": {
        const t = last + 1;
        last = t;
        expected.accepted.push(t);
        parts.push(`{"t":${t},"sp":${numText(it.sp)},"pv":${numText(it.pv)},"mv":${numText(it.mv)},"mode":"${it.mode}"}`);
        break;
      }
      case "duplicate":
        parts.push(`{"t":${last},"sp":1,"pv":1,"mv":1,"mode":"auto"}`);
        add("duplicate");
        break;
      case "out-of-order":
        parts.push(`{"t":${Math.max(0, last - it.back)},"sp":1,"pv":1,"mv":1,"mode":"auto"}`);
        add("out-of-order");
        break;
      case "future":
        parts.push(`{"t":${now + it.ahead},"sp":1,"pv":1,"mv":1,"mode":"manual"}`);
        add("future");
        break;
      case "non-finite": {
        const f = { t: String(last + 1), sp: "1", pv: "1", mv: "1" };
        f[it.field] = it.literal;
        parts.push(`{"t":${f.t},"sp":${f.sp},"pv":${f.pv},"mv":${f.mv},"mode":"auto"}`);
        add("non-finite");
        break;
      }
      case "bad-shape":
        parts.push(badShape(it.variant, it.junk, last + 1));
        add("bad-shape");
        break;
    }
  }
  // A lone item that is itself an array would be read as a batch: wrap it.
  const body = asArray || parts.length > 1 || parts[0]!.startsWith("[") ? `[${parts.join(",")}]` : parts[0]!;
  // Byte for byte the last accepted message of this loop: a re-send; its old samples are redeliveries.
  if (cur.lastBody !== null && body === cur.lastBody) {
    const redelivered = (expected.reasons.duplicate ?? 0) + (expected.reasons["out-of-order"] ?? 0);
    delete expected.reasons.duplicate;
    delete expected.reasons["out-of-order"];
    expected.redelivered = redelivered;
  }
  if (expected.accepted.length > 0) {
    cur.lastT = last;
    cur.lastBody = body;
  }
  return { body, expected };
}

/** What the contract expects of a raw body (judged by the reference JSON parser of this process). */
export function expectRaw(body: string | Uint8Array): Expected {
  const none: Expected = { accepted: [], reasons: {}, redelivered: 0 };
  const bytes = typeof body === "string" ? Buffer.byteLength(body) : body.byteLength;
  if (bytes > 64 * 1024) return { ...none, reasons: { "too-large": 1 } };
  let v: unknown;
  try {
    v = JSON.parse(typeof body === "string" ? body : Buffer.from(body).toString("utf8"));
  } catch {
    return { ...none, reasons: { "bad-json": 1 } };
  }
  if (Array.isArray(v)) {
    if (v.length === 0) return { ...none, reasons: { "bad-shape": 1 } };
    if (v.length > 500) return { ...none, reasons: { "too-many-samples": 1 } };
    // Only deep-nesting arrays reach here: one item that is itself an array.
    return { ...none, reasons: { "bad-shape": v.length } };
  }
  if (v !== null && typeof v === "object") return { ...none, reasons: { "bad-shape": 1 } };
  return { ...none, reasons: { "bad-shape": 1 } };
}

export function addExpected(into: Expected, e: Expected): void {
  into.accepted.push(...e.accepted);
  into.redelivered += e.redelivered;
  for (const [k, v] of Object.entries(e.reasons) as [RejectReason, number][]) into.reasons[k] = (into.reasons[k] ?? 0) + v;
}
