/**
 * Loop inventory import/export: every problem of a sheet reported with its line, per-kind defaults
 * applied and listed in the preview, duplicates refused, all loops or none saved (with change-log
 * rows), and an export that imports again into the same loops and the same file. The route runs
 * against a real MariaDB with the session guard replaced by a stand-in (the guard has its own
 * tests). The CSV reading is checked against Python's csv module (the standard library's reader,
 * an implementation independent of the product's) for the line-by-line cell contents.
 */
import { execFileSync } from "node:child_process";
import { QueryTypes } from "sequelize";
import { afterAll, beforeAll, describe, expect, it, vi } from "vitest";
import type { TenantContext } from "@/lib/domain/types";
import { createAuthFixture, fixtureContext, type AuthFixture } from "../auth/fixture";
import { createTestDatabase, type TestDatabase } from "../setup/db";
import { signInAs } from "@/tests/helpers/guard-stand-in";
import { jsonRequest } from "@/tests/helpers/json-request";
import { PYTHON } from "../helpers/python";

vi.mock("@/lib/auth/guard", async () => (await import("@/tests/helpers/guard-stand-in")).guardStandIn({ checkRole: false }));

const route = await import("@/app/api/admin/loop-inventory/route");
const { KIND_DEFAULTS } = await import("@/lib/admin/inventory-defaults");
const { parseInventoryCsv } = await import("@/lib/admin/inventory-csv");
const { INVENTORY_COLUMNS } = await import("@/lib/admin/inventory-csv-columns");
const { bodyLimitForPath } = await import("@/lib/request-guard");

let db: TestDatabase;
let fx: AuthFixture;
let engA: TenantContext;
let engB: TenantContext;

const post = (body: unknown) => route.POST(jsonRequest("POST", "/api/admin/loop-inventory", body));
const exportCsv = async () => {
  const res = await route.GET();
  expect(res.status).toBe(200);
  expect(res.headers.get("content-type")).toMatch(/^text\/csv/);
  return res.text();
};
const count = async (table: string, tenantId: number) =>
  Number(((await db.sequelize.query(`SELECT COUNT(*) AS n FROM \`${table}\` WHERE tenant_id = ?`, { replacements: [tenantId], type: QueryTypes.SELECT })) as { n: number }[])[0]!.n);

interface Result {
  ok: boolean;
  rows: { line: number; loop: Record<string, unknown>; defaulted: string[] }[];
  issues: { line: number; column: string | null; message: string }[];
  created?: number[];
}

const SITE_A = "Brackwater Polymers North";
const HEADER = INVENTORY_COLUMNS.map((c) => c.name).join(",");

beforeAll(async () => {
  db = await createTestDatabase("inv", { asDefault: true });
  fx = await createAuthFixture(db.models);
  engA = fixtureContext(fx.a, "engineer", "Engineer");
  engB = fixtureContext(fx.b, "engineer", "Engineer");
  signInAs(engA);
});
afterAll(async () => {
  await db?.drop();
});

describe("preview", () => {
  it("applies the kind's defaults to blank cells, lists them, and saves nothing", async () => {
    const loopsBefore = await count("loops", fx.a.id);
    const changesBefore = await count("config_changes", fx.a.id);
    const csv = ["tag,site,kind,description,telemetry_period_s", `LIC-201,${SITE_A},level,Surge drum level,`, `TIC-310,${SITE_A},temperature,,10`].join("\n");
    const res = await post({ csv, commit: false });
    expect(res.status).toBe(200);
    const out = (await res.json()) as Result;
    expect(out.issues).toEqual([]);
    expect(out.ok).toBe(true);
    const [lic, tic] = out.rows;
    expect(lic!.line).toBe(2);
    expect(lic!.loop).toMatchObject({ tag: "LIC-201", kind: "level", gainValue: KIND_DEFAULTS.level.gainValue, tiValue: KIND_DEFAULTS.level.tiValue, units: "%", description: "Surge drum level" });
    expect(lic!.defaulted).toContain("gainValue");
    expect(lic!.defaulted).toContain("telemetryPeriodS");
    expect(lic!.defaulted).not.toContain("description");
    // A telemetry period given: the controller scan follows it and the estimation period is at least it.
    expect(tic!.loop).toMatchObject({ telemetryPeriodS: 10, controllerPeriodS: 10, estimationPeriodS: 10, units: "°C" });
    expect(tic!.defaulted).not.toContain("telemetryPeriodS");
    expect(await count("loops", fx.a.id)).toBe(loopsBefore);
    expect(await count("config_changes", fx.a.id)).toBe(changesBefore);
  });

  it("reports every problem with its line and column; a commit of that sheet is 422 and saves nothing", async () => {
    const csv = [
      "tag,site,area,kind,gain,ti,pv_lo,pv_hi,description",
      `FIC-501,${SITE_A},Utilities,flow,0.4,8,0,50,"first line`, // a quoted description over two lines
      `of the note"`,
      `FIC-502,Nowhere Site,,flow,,,,,`, // line 4: unknown site
      `FIC-503,${SITE_A},,flow,abc,,,,`, // line 5: not a number
      `FIC-504,${SITE_A},,flow,20000,,,,`, // line 6: gain beyond the form's limit
      `FIC-505,${SITE_A},,flow,,,10,5,`, // line 7: range high below low
      `fic 501,${SITE_A},,flow,,,,,`, // line 8: same slug as line 2
      `FIC-101,${SITE_A},,flow,,,,,`, // line 9: exists already
      `FIC-510,${SITE_A},Tank Farm,valve,,,,,`, // line 10: unknown area and unknown kind
      `FIC-511,${SITE_A},,flow,0x10,,,,`, // line 11: hexadecimal is not a number here
      `FIC-512,${SITE_A},,flow`, // line 12: too few cells
      `,${SITE_A},,flow,,,,,`, // line 13: no tag
    ].join("\r\n");
    const out = (await (await post({ csv, commit: false })).json()) as Result;
    expect(out.ok).toBe(false);
    const at = (line: number) => out.issues.filter((i) => i.line === line);
    expect(at(2)).toEqual([]);
    expect(at(3)).toEqual([]);
    expect(at(4)).toEqual([expect.objectContaining({ column: "site", message: expect.stringMatching(/no site "Nowhere Site"/) })]);
    expect(at(5)).toEqual([expect.objectContaining({ column: "gain", message: expect.stringMatching(/must be a number/) })]);
    expect(at(6)).toEqual([expect.objectContaining({ column: "gain", message: expect.stringMatching(/between 1e-4 and 1e4/) })]);
    expect(at(7)).toEqual([expect.objectContaining({ column: "pv_hi", message: expect.stringMatching(/high must be above low/) })]);
    expect(at(8)).toEqual([expect.objectContaining({ column: "tag", message: expect.stringMatching(/duplicates line 2/) })]);
    expect(at(9)).toEqual([expect.objectContaining({ column: "tag", message: expect.stringMatching(/already exists/) })]);
    expect(at(10).map((i) => i.column)).toEqual(["kind"]);
    expect(at(11)).toEqual([expect.objectContaining({ column: "gain" })]);
    // lib/csv's wording; the column is the first one the row lacks.
    expect(at(12)).toEqual([expect.objectContaining({ column: "gain", message: expect.stringMatching(/^4 cells, the header has 9/) })]);
    expect(at(13)).toEqual([expect.objectContaining({ column: "tag", message: "is required." })]);
    expect(out.issues).toHaveLength(10);

    const loopsBefore = await count("loops", fx.a.id);
    const changesBefore = await count("config_changes", fx.a.id);
    const res = await post({ csv, commit: true, reason: "plant inventory sheet" });
    expect(res.status).toBe(422);
    const body = (await res.json()) as { error: string; details: { issues: unknown[] } };
    expect(body.details.issues).toHaveLength(10);
    expect(await count("loops", fx.a.id)).toBe(loopsBefore);
    expect(await count("config_changes", fx.a.id)).toBe(changesBefore);
  });

  it("refuses a header with an unknown or missing column, naming it on line 1", async () => {
    const out = (await (await post({ csv: "tag,kind,gains\nX,flow,1", commit: false })).json()) as Result;
    // lib/csv's wording (strict header): both faults of the line, each with its column.
    expect(out.issues).toEqual([
      { line: 1, column: "gains", message: expect.stringMatching(/^the column "gains" is not one this file takes/) },
      { line: 1, column: "site", message: expect.stringMatching(/^the header lacks site;/) },
    ]);
    const unclosed = (await (await post({ csv: `tag,site,kind\nA,${SITE_A},flow\n"B,${SITE_A},flow\n`, commit: false })).json()) as Result;
    expect(unclosed.ok).toBe(false);
    expect(unclosed.issues).toEqual([{ line: 3, column: null, message: expect.stringMatching(/quoted cell starts on this line and is not closed/) }]);
  });

  it("reads cells as Python's csv module does (quotes, commas, newlines, BOM-free UTF-8)", () => {
    // Reference: Python's standard csv reader (excel dialect), an implementation independent of lib/csv.
    const csv = `tag,site,kind,description\r\nA-1,${SITE_A},flow,"a, ""quoted"" note"\r\nA-2,${SITE_A},flow,"two\nlines"\r\nA-3,${SITE_A},flow,Ωmega café\r\nA-4,${SITE_A},flow,"crlf\r\ninside"\r\n`;
    const py = execFileSync(PYTHON, ["-c", "import csv,io,sys,json; print(json.dumps(list(csv.reader(io.StringIO(sys.stdin.read(), newline='')))))"], { input: csv }).toString();
    const reference = JSON.parse(py) as string[][];
    const { rows, issues } = parseInventoryCsv(csv);
    expect(issues).toEqual([]);
    expect(rows.map((r) => [r.tag, r.site, r.kind, r.given.description ?? ""])).toEqual(reference.slice(1));
    expect(rows.map((r) => r.line)).toEqual([2, 3, 5, 6]); // the records of lines 3 and 6 go on to the next line
  });
});

describe("commit", () => {
  it("is all or nothing: a failure on the second loop's change-log row leaves no loop and no row", async () => {
    const loopsBefore = await count("loops", fx.a.id);
    const changesBefore = await count("config_changes", fx.a.id);
    const create = db.models.ConfigChange.create.bind(db.models.ConfigChange);
    let calls = 0;
    const spy = vi.spyOn(db.models.ConfigChange, "create").mockImplementation(async (...args: Parameters<typeof create>) => {
      if (++calls === 2) throw new Error("disk full (simulated)");
      return create(...args);
    });
    try {
      const csv = `tag,site,kind\nPIC-601,${SITE_A},pressure\nPIC-602,${SITE_A},pressure\nPIC-603,${SITE_A},pressure\n`;
      const res = await post({ csv, commit: true, reason: "new pressure loops" });
      expect(res.status).toBe(500);
      expect(calls).toBe(2);
    } finally {
      spy.mockRestore();
    }
    expect(await count("loops", fx.a.id)).toBe(loopsBefore);
    expect(await count("config_changes", fx.a.id)).toBe(changesBefore);
  });

  it("needs a reason, then creates every loop with one change-log row each", async () => {
    const csv = `tag,site,kind\nPIC-601,${SITE_A},pressure\nPIC-602,${SITE_A},pressure\n`;
    expect((await post({ csv, commit: true })).status).toBe(422);
    const res = await post({ csv, commit: true, reason: "new pressure loops", mocReference: "MOC-2291" });
    expect(res.status).toBe(201);
    const out = (await res.json()) as Result;
    expect(out.created).toHaveLength(2);
    const log = await db.sequelize.query("SELECT entity, entity_id AS entityId, reason, moc_reference AS moc FROM config_changes WHERE tenant_id = ? AND entity_id IN (?) ORDER BY entity_id", {
      replacements: [fx.a.id, out.created],
      type: QueryTypes.SELECT,
    });
    expect(log).toEqual(out.created!.map((id) => ({ entity: "loop", entityId: id, reason: "Inventory import: new pressure loops", moc: "MOC-2291" })));
    // The same sheet again is refused whole as duplicates.
    const again = (await (await post({ csv, commit: false })).json()) as Result;
    expect(again.issues.map((i) => [i.line, i.column])).toEqual([[2, "tag"], [3, "tag"]]);
  });
});

describe("export", () => {
  it("round trip: an export imported into another tenant exports to the same file and the same loops", async () => {
    signInAs(engA);
    const sheet = [
      "tag,site,area,kind,description,units,gain_kind,gain,ti,ti_units,td,td_units,derivative_filter_s,pv_lo,pv_hi,baseline_time_constant_s,enabled,action,form",
      `TIC-701,${SITE_A},Utilities,temperature,"=SUM(A1) looks like a formula",°C,pb,150,2,repeats-per-min,0.5,min,none,-40,1.5e3,600,no,direct,series`,
      `FIC-702,${SITE_A},,flow,"a, ""quoted""\nnote",m3/h,gain,0.35,none,s,0,s,0.1,0,120,none,yes,reverse,parallel`,
      `AIC-703,${SITE_A},,composition,'@head,ppm,,,,,,,,,,,,,`,
    ].join("\n");
    expect((await post({ csv: sheet, commit: true, reason: "inventory round trip" })).status).toBe(201);
    const exportA = await exportCsv();
    expect(exportA.split("\r\n")[0]).toBe(HEADER);
    expect(exportA).toContain("'=SUM(A1) looks like a formula"); // guarded against spreadsheet formulas
    expect(exportA).toContain(",'@head,"); // the sheet's guard quote is read off and written back

    // Tenant B gets a site and area of the same names, then imports A's export.
    const site = await db.models.Site.create({ tenantId: fx.b.id, slug: "brackwater-north", name: SITE_A });
    await db.models.Area.create({ tenantId: fx.b.id, siteId: site.id, slug: "utilities", name: "Utilities" });
    signInAs(engB);
    const res = await post({ csv: exportA, commit: true, reason: "copy of the inventory" });
    expect(res.status, JSON.stringify(await res.clone().json())).toBe(201);
    const exportB = await exportCsv();
    const own = (csv: string) => csv.split("\r\n").filter((l) => !l.includes("Quillon Terminals North"));
    expect(own(exportB)).toEqual(own(exportA));

    const fields = "tag, description, kind, units, pv_lo, pv_hi, mv_lo, mv_hi, gain_kind, gain_value, ti_value, ti_units, td_value, td_units, tf_s, telemetry_period_s, controller_period_s, estimation_period_s, na, nb, nk, baseline_time_constant_s, enabled, action, form";
    const rowsOf = (tenantId: number, siteId: number) =>
      db.sequelize.query(`SELECT ${fields} FROM loops WHERE tenant_id = ? AND site_id = ? ORDER BY tag`, { replacements: [tenantId, siteId], type: QueryTypes.SELECT });
    const a = await rowsOf(fx.a.id, fx.a.siteId);
    expect(a.length).toBeGreaterThanOrEqual(6);
    expect(await rowsOf(fx.b.id, site.id)).toEqual(a);
    const tic = (a as Record<string, unknown>[]).find((r) => r.tag === "TIC-701")!;
    expect(tic).toMatchObject({ description: "=SUM(A1) looks like a formula", gain_kind: "pb", ti_units: "repeats-per-min", tf_s: null, pv_hi: 1500, enabled: 0 });
    const aic = (a as Record<string, unknown>[]).find((r) => r.tag === "AIC-703")!;
    expect(aic.description).toBe("@head");
    signInAs(engA);
  });

  it("a sheet of 800 loops (over the 64 KiB JSON limit) is admitted by the body limit and previews clean", async () => {
    const lines = [HEADER.split(",").slice(0, 6).join(",")];
    for (let i = 0; i < 800; i++) lines.push(`FT-${1000 + i},Feed header flow meter number ${i} on the north rack,${SITE_A},,flow,m3/h`);
    const csv = lines.join("\n");
    expect(JSON.stringify({ csv }).length).toBeGreaterThan(64 * 1024);
    expect(bodyLimitForPath("/api/admin/loop-inventory")).toBeGreaterThan(JSON.stringify({ csv }).length);
    const out = (await (await post({ csv, commit: false })).json()) as Result;
    expect(out.issues).toEqual([]);
    expect(out.rows).toHaveLength(800);
  });
});
