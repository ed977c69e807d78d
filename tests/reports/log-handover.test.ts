/**
 * The operator log, the loop timeline and the shift handover through their route handlers, on a
 * real MariaDB. The session guard is replaced by a stand-in applying the same role rule to a chosen
 * user (as in tests/alarms/api.test.ts), so what is under test is each route's role, tenancy and data.
 * Shift boundaries on the daylight-saving day follow Directive 2000/84/EC (see shifts.test.ts).
 * The CSV and the PDF (text extracted with poppler-utils' pdftotext) must carry the same cells as
 * the document the screen renders; the CSV is read back with Python's csv module (an outside reader).
 */
import { execFileSync } from "node:child_process";
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import { afterAll, beforeAll, describe, expect, it, vi } from "vitest";
import { handoverDocument } from "@/lib/reports/document";
import type { Handover } from "@/lib/reports/handover";
import type { Role } from "@/lib/domain/types";
import { createFixture, type Fixture } from "../alarms/helpers";
import { createTestDatabase, type TestDatabase } from "../setup/db";
import { signInAs } from "@/tests/helpers/guard-stand-in";
import { jsonRequest } from "@/tests/helpers/json-request";
import { PYTHON } from "../helpers/python";

vi.mock("@/lib/auth/guard", async () => (await import("@/tests/helpers/guard-stand-in")).guardStandIn());

const notesRoute = await import("@/app/api/notes/route");
const timelineRoute = await import("@/app/api/loops/[loopId]/timeline/route");
const handoverRoute = await import("@/app/api/reports/handover/route");
const confirmRoute = await import("@/app/api/reports/handover/confirm/route");

const url = (p: string) => `http://127.0.0.1${p}`;
const get = (p: string) => new Request(url(p));
const post = (p: string, body: unknown) => jsonRequest("POST", p, body);
const as = (role: Role | "outsider") => {
  signInAs(role === "outsider" ? fx.outsider : fx.users[role]);
};
const Z = (s: string) => Date.parse(s);

let db: TestDatabase;
let fx: Fixture;
const sql = (q: string, replacements: unknown[] = []) => db.sequelize.query(q, { replacements });

beforeAll(async () => {
  db = await createTestDatabase("reportslog", { asDefault: true });
  fx = await createFixture(db.models);
  await sql("UPDATE sites SET time_zone = 'Europe/Berlin', shift_starts = '06:00,14:00,22:00' WHERE id = ?", [fx.siteId]);
}, 120_000);

afterAll(async () => {
  await db?.drop();
});

async function addNote(at: string, text: string, kind: "shift" | "loop" = "shift"): Promise<void> {
  await sql(
    "INSERT INTO operator_notes (tenant_id, site_id, area_id, loop_id, kind, author_id, author_name, text, at) VALUES (?,?,?,?,?,?,?,?,?)",
    [fx.tenantId, fx.siteId, fx.areaId, kind === "loop" ? fx.loopId : null, kind, fx.users.operator.userId, fx.users.operator.name, text, new Date(Z(at))],
  );
}

describe("operator log", () => {
  it("operators write notes, viewers read them, a viewer may not write, and a correction is a new note", async () => {
    as("viewer");
    expect((await notesRoute.POST(post("/api/notes", { kind: "loop", loopId: fx.loopId, text: "x" }))).status).toBe(403);
    as("operator");
    const r = await notesRoute.POST(post("/api/notes", { kind: "loop", loopId: fx.loopId, text: "Valve FV-101 hunts, field check requested" }));
    expect(r.status).toBe(201);
    const { note } = (await r.json()) as { note: { id: number; siteId: number; authorName: string } };
    expect(note.siteId).toBe(fx.siteId);
    expect(note.authorName).toBe(fx.users.operator.name);
    const c = await notesRoute.POST(post("/api/notes", { kind: "loop", loopId: fx.loopId, text: "FV-102, not FV-101", correctsId: note.id }));
    expect(c.status).toBe(201);
    as("viewer");
    const list = (await (await notesRoute.GET(get(`/api/notes?loopId=${fx.loopId}`))).json()) as { notes: { text: string; correctsId: number | null }[] };
    expect(list.notes.map((n) => n.text)).toEqual(["FV-102, not FV-101", "Valve FV-101 hunts, field check requested"]);
    expect(list.notes[0]!.correctsId).toBe(note.id);
  });

  it("refuses empty text (422) and a loop of another tenant (404, like a missing one)", async () => {
    as("operator");
    expect((await notesRoute.POST(post("/api/notes", { kind: "loop", loopId: fx.loopId, text: "   " }))).status).toBe(422);
    expect((await notesRoute.POST(post("/api/notes", { kind: "loop", loopId: fx.otherLoopId, text: "hello" }))).status).toBe(404);
    expect((await notesRoute.POST(post("/api/notes", { kind: "shift", siteId: fx.siteId, areaId: 999999, text: "hello" }))).status).toBe(404);
  });

  it("only the author's tenant sees its notes", async () => {
    as("outsider");
    const list = (await (await notesRoute.GET(get(`/api/notes?loopId=${fx.loopId}`))).json()) as { notes: unknown[] };
    expect(list.notes).toEqual([]);
    const all = (await (await notesRoute.GET(get("/api/notes"))).json()) as { notes: unknown[] };
    expect(all.notes).toEqual([]);
  });

  it("the log is append-only in the database: UPDATE and DELETE are refused", async () => {
    await expect(sql("UPDATE operator_notes SET text = 'changed'")).rejects.toThrow(/append-only/);
    await expect(sql("DELETE FROM operator_notes")).rejects.toThrow(/append-only/);
  });
});

describe("loop timeline", () => {
  it("merges alarm events, notes, configuration changes and tracker-state changes, newest first", async () => {
    const [alarmId] = (await sql(
      "INSERT INTO alarms (tenant_id, loop_id, `condition`, priority, state, active, message, created_at, updated_at) VALUES (?,?, 'margin', 'high', 'acknowledged', 1, '', UTC_TIMESTAMP(3), UTC_TIMESTAMP(3))",
      [fx.tenantId, fx.loopId],
    )) as unknown as [number];
    const base = Z("2026-11-20T08:00:00Z");
    await sql("INSERT INTO alarm_events (tenant_id, alarm_id, loop_id, journal_id, at, kind, from_state, to_state, user_id, comment) VALUES (?,?,?,?,?,?,?,?,?,?)", [
      fx.tenantId, alarmId, fx.loopId, "tl-1", new Date(base), "activate", "normal", "unacknowledged", null, null,
    ]);
    await sql("INSERT INTO alarm_events (tenant_id, alarm_id, loop_id, journal_id, at, kind, from_state, to_state, user_id, comment) VALUES (?,?,?,?,?,?,?,?,?,?)", [
      fx.tenantId, alarmId, fx.loopId, "tl-2", new Date(base + 60_000), "acknowledge", "unacknowledged", "acknowledged", fx.users.operator.userId, "seen on the board",
    ]);
    await sql("INSERT INTO config_changes (tenant_id, user_id, entity, entity_id, diff, reason, at) VALUES (?,?,?,?,?,?,?)", [
      fx.tenantId, fx.users.engineer.userId, "loop", fx.loopId, JSON.stringify({ gainValue: { from: 0.8, to: 0.6 } }), "less overshoot", new Date(base + 120_000),
    ]);
    await sql("INSERT INTO pole_snapshots (loop_id, t, radius, decay_ratio, poles, tracker_state) VALUES (?,?,?,?,?,?),(?,?,?,?,?,?)", [
      fx.loopId, base - 3600_000, 0.9, 0.2, null, "tracking", fx.loopId, base + 180_000, 0.9, 0.2, null, "manual",
    ]);
    await addNote("2026-11-20T08:04:00Z", "Put in manual for the valve check", "loop");
    as("viewer");
    const r = await timelineRoute.GET(get(`/api/loops/${fx.loopId}/timeline?from=2026-11-20T07:00:00Z&to=2026-11-20T09:00:00Z`), { params: Promise.resolve({ loopId: String(fx.loopId) }) });
    expect(r.status).toBe(200);
    const { items } = (await r.json()) as { items: { kind: string; title: string; detail: string | null; who: string | null }[] };
    expect(items.map((i) => i.kind)).toEqual(["note", "state", "config", "alarm", "alarm"]);
    expect(items[1]!.title).toBe("tracker state tracking -> manual");
    expect(items[2]!.title).toBe("tuning changed");
    expect(items[2]!.detail).toContain("reason: less overshoot");
    expect(items[3]).toMatchObject({ title: "margin alarm acknowledged (acknowledged)", detail: "seen on the board", who: fx.users.operator.name });
    as("outsider");
    const o = await timelineRoute.GET(get(`/api/loops/${fx.loopId}/timeline`), { params: Promise.resolve({ loopId: String(fx.loopId) }) });
    expect(o.status).toBe(404);
  });
});

describe("shift handover across the autumn daylight-saving change (Europe/Berlin)", () => {
  const NIGHT = "2026-10-24T20:00:00Z"; // 22:00 CEST; the shift ends 06:00 CET = 05:00Z, 9 h later

  beforeAll(async () => {
    await addNote("2026-10-24T19:30:00Z", "before the night (21:30 CEST): not in it");
    await addNote("2026-10-24T20:30:00Z", "Night start: feed pump B on standby");
    await addNote("2026-10-25T04:30:00Z", "05:30 CET, the ninth hour: level LIC-205 drifting, watch it");
    await addNote("2026-10-25T05:30:00Z", "06:30 CET: belongs to the early shift");
    const [alarmId] = (await sql(
      "INSERT INTO alarms (tenant_id, loop_id, `condition`, priority, state, active, message, created_at, updated_at) VALUES (?,?, 'unstable', 'urgent', 'unacknowledged', 1, '', UTC_TIMESTAMP(3), UTC_TIMESTAMP(3))",
      [fx.tenantId, fx.loopId],
    )) as unknown as [number];
    // Active from 04:40Z (inside the ninth hour), still active at the end; acknowledged only after the end.
    await sql("INSERT INTO alarm_occurrences (alarm_id, tenant_id, loop_id, area_id, `condition`, priority, started_at, ended_at, acknowledged_at) VALUES (?,?,?,?,?,?,?,?,?)", [
      alarmId, fx.tenantId, fx.loopId, fx.areaId, "unstable", "urgent", new Date(Z("2026-10-25T04:40:00Z")), null, new Date(Z("2026-10-25T05:20:00Z")),
    ]);
    // Work-list items: one opened at 05:10 CET (inside the ninth hour), one the evening before (not in it).
    const item = (at: string, label: string, status: string) =>
      sql(
        `INSERT INTO work_items (tenant_id, site_id, loop_id, label, status, confidence, opened_at, last_seen_at, figures_at_open, figures_latest, evidence, created_at, updated_at)
         VALUES (?,?,?,?,?,0.85,?,?,'{}','{}',?,UTC_TIMESTAMP(3),UTC_TIMESTAMP(3))`,
        [fx.tenantId, fx.siteId, fx.loopId, label, status, new Date(Z(at)), new Date(Z(at)), JSON.stringify([`likely ${label} (test finding)`, "second line"])],
      );
    await item("2026-10-24T18:00:00Z", "aggressive-tuning", "in-work");
    await item("2026-10-25T04:10:00Z", "valve-stiction", "open");
    await sql("INSERT INTO pole_snapshots (loop_id, t, radius, decay_ratio, poles, tracker_state) VALUES (?,?,?,?,?,?),(?,?,?,?,?,?)", [
      fx.loopId, Z("2026-10-24T12:00:00Z"), 0.8, 0.1, null, "tracking", fx.loopId, Z("2026-10-25T04:35:00Z"), 1.02, null, null, "tracking",
    ]);
  });

  it("covers 22:00 to 06:00 local, 9 hours: a note in the ninth hour is in, notes outside are out", async () => {
    as("viewer");
    const r = await handoverRoute.GET(get(`/api/reports/handover?siteId=${fx.siteId}&shift=${NIGHT}`));
    expect(r.status).toBe(200);
    const { handover } = (await r.json()) as { handover: Handover };
    expect(handover.shift.end - handover.shift.start).toBe(9 * 3600_000);
    expect(handover.notes.map((n) => n.text)).toEqual(["Night start: feed pump B on standby", "05:30 CET, the ninth hour: level LIC-205 drifting, watch it"]);
    expect(handover.activeAlarms).toMatchObject([{ priority: "urgent", condition: "unstable", acknowledged: false, loopTag: "FIC-101" }]);
    expect(handover.stateChanges).toMatchObject([{ loopTag: "FIC-101", verdictAtStart: "stable", verdictAtEnd: "unstable", changes: 0 }]);
    expect(handover.kpis.totalAlarms).toBe(1);
    // the engineering findings of the shift: only the item opened inside it, worded as the console words it
    expect(handover.workItems).toMatchObject([{ loopTag: "FIC-101", label: "valve-stiction", confidence: 0.85, openedAt: Z("2026-10-25T04:10:00Z"), evidence: "likely valve-stiction (test finding)" }]);
    const section = handoverDocument(handover).sections.find((x) => x.id === "work-items")!;
    expect(section.rows).toEqual([[expect.stringContaining("05:10"), "FIC-101", "sticking valve", "0.85", "likely valve-stiction (test finding)"]]);
  });

  it("refuses a time that is not a shift start and a shift that has not ended; another tenant's site is 404", async () => {
    as("viewer");
    expect((await handoverRoute.GET(get(`/api/reports/handover?siteId=${fx.siteId}&shift=2026-10-24T21:00:00Z`))).status).toBe(422);
    const future = new Date(Date.now() + 86_400_000).toISOString();
    expect((await handoverRoute.GET(get(`/api/reports/handover?siteId=${fx.siteId}&shift=${future}`))).status).toBe(422);
    as("outsider");
    expect((await handoverRoute.GET(get(`/api/reports/handover?siteId=${fx.siteId}&shift=${NIGHT}`))).status).toBe(404);
  });

  it("operators confirm reading it once (viewers may not); the confirmation shows in the handover", async () => {
    as("viewer");
    expect((await confirmRoute.POST(post("/api/reports/handover/confirm", { siteId: fx.siteId, shift: NIGHT }))).status).toBe(403);
    as("operator");
    expect((await confirmRoute.POST(post("/api/reports/handover/confirm", { siteId: fx.siteId, shift: NIGHT }))).status).toBe(201);
    expect((await confirmRoute.POST(post("/api/reports/handover/confirm", { siteId: fx.siteId, shift: NIGHT }))).status).toBe(201);
    const { handover } = (await (await handoverRoute.GET(get(`/api/reports/handover?siteId=${fx.siteId}&shift=${NIGHT}`))).json()) as { handover: Handover };
    expect(handover.confirmations.map((c) => c.userName)).toEqual([fx.users.operator.name]);
  });

  it("the CSV and the PDF hold the same cells as the document the screen shows", async () => {
    as("viewer");
    const { handover } = (await (await handoverRoute.GET(get(`/api/reports/handover?siteId=${fx.siteId}&shift=${NIGHT}`))).json()) as { handover: Handover };
    const doc = handoverDocument(handover);
    const csvRes = await handoverRoute.GET(get(`/api/reports/handover?siteId=${fx.siteId}&shift=${NIGHT}&format=csv`));
    expect(csvRes.headers.get("content-type")).toBe("text/csv; charset=utf-8");
    const bytes = Buffer.from(await csvRes.arrayBuffer());
    expect([...bytes.subarray(0, 3)]).toEqual([0xef, 0xbb, 0xbf]); // UTF-8 byte-order mark
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-handover-"));
    const csvFile = path.join(dir, "h.csv");
    fs.writeFileSync(csvFile, bytes);
    const reader = "import csv, json, sys\nprint(json.dumps(list(csv.reader(open(sys.argv[1], encoding='utf-8-sig', newline='')))))";
    const records = JSON.parse(execFileSync(PYTHON, ["-c", reader, csvFile], { encoding: "utf8" })) as string[][];
    const pdfRes = await handoverRoute.GET(get(`/api/reports/handover?siteId=${fx.siteId}&shift=${NIGHT}&format=pdf`));
    expect(pdfRes.headers.get("content-type")).toBe("application/pdf");
    const file = path.join(dir, "h.pdf");
    fs.writeFileSync(file, Buffer.from(await pdfRes.arrayBuffer()));
    const text = execFileSync("pdftotext", ["-layout", file, "-"], { encoding: "utf8" });
    const flat = text.replace(/\s+/g, " ");
    // pdftotext drops some spaces between kerned glyphs ("< 1" reads "<1"): cells compare without spaces.
    const dense = text.replace(/\s+/g, "");
    expect(flat).toContain("page 1 of");
    expect(flat).toContain(doc.period);
    expect(flat).toContain("not a safety system");
    let checked = 0;
    for (const s of doc.sections) {
      for (const row of s.rows) {
        expect(records).toContainEqual(row);
        for (const cell of row) {
          if (cell.length < 40) expect(dense).toContain(cell.replace(/\s+/g, ""));
          checked++;
        }
      }
    }
    expect(checked).toBeGreaterThan(20);
    fs.rmSync(dir, { recursive: true, force: true });
  });
});
