/**
 * One database boundary (docs/architecture.md §6): every SQL statement and every Sequelize model
 * query lives in lib/data. This scan fails when product source elsewhere (app, lib, server,
 * simulators) writes SQL, calls a model's query methods, reaches the models through the
 * connection, or imports a model class; and when app/ imports models/ at all, even a type.
 * scripts/, migrations/, tests/ and the model definitions in models/ are not scanned.
 * Common practice (a layering check); no external source.
 */
import fs from "node:fs";
import path from "node:path";
import { describe, expect, it } from "vitest";
import { ROOT, sources } from "./sources";

const under = (p: string, dir: string) => p === dir || p.startsWith(`${dir}/`);

/** Files that may hold SQL and model queries: the data layer. */
const HOME = "lib/data";

/** No folder outside the data layer is allowed SQL (the list stays for a migration in progress). */
const TEMPORARILY_ALLOWED: string[] = [];

/** The model classes defined in models/ (`export class X extends Model`, or a shared base such as `Row<X>`). */
function modelNames(): string[] {
  return sources("models").flatMap((f) =>
    [...fs.readFileSync(path.join(ROOT, f), "utf8").matchAll(/export class (\w+) extends (?:Model|\w+<\1>)\W/g)].map((m) => m[1]!),
  );
}

const QUERY_METHODS =
  "findAll|findOne|findByPk|findAndCountAll|findOrCreate|findCreateFind|create|bulkCreate|update|upsert|destroy|count|max|min|sum|increment|decrement|truncate|restore|aggregate|sync|drop";

/** Comments may name SQL or query methods; only code counts. */
function stripComments(text: string): string {
  return text.replace(/\/\*[\s\S]*?\*\//g, "").replace(/(^|[^:"'`\\])\/\/.*$/gm, "$1");
}

export function dataLayerRules(models: readonly string[]): { why: string; pattern: RegExp }[] {
  const names = models.join("|");
  return [
    { why: "raw query (sequelize.query)", pattern: /\.query\s*(<[^;]*?>)?\s*\(/ },
    { why: "QueryTypes", pattern: /\bQueryTypes\b/ },
    { why: "query interface", pattern: /\bgetQueryInterface\s*\(/ },
    { why: "transaction", pattern: /\.transaction\s*\(/ },
    { why: "model query method", pattern: new RegExp(`\\b(${names})\\.(${QUERY_METHODS})\\s*\\(`) },
    { why: "models reached through the connection", pattern: new RegExp(`\\bgetDb\\s*\\([^)]*\\)\\s*\\.models\\b|\\.models\\.(${names})\\b`) },
    {
      why: "SQL text",
      pattern: /["'`]\s*(SELECT\s[\s\S]{0,400}?\sFROM\s|INSERT\s+(IGNORE\s+)?INTO\s|UPDATE\s+`?\w+`?\s+SET\s|DELETE\s+FROM\s|REPLACE\s+INTO\s|(ALTER|CREATE|DROP|TRUNCATE)\s+TABLE\s)/,
    },
    { why: "imports a model class (only types may leave lib/data)", pattern: /^\s*import\s+(?!type\b)[^;]*?from\s*["'](@\/models|(\.\.\/)+models)(\/[^"']*)?["']/m },
  ];
}

export function dataLayerViolations(files: readonly string[], read: (f: string) => string, models: readonly string[]): string[] {
  const rules = dataLayerRules(models);
  const out: string[] = [];
  for (const f of files) {
    if (under(f, HOME) || TEMPORARILY_ALLOWED.some((d) => under(f, d))) continue;
    const code = stripComments(read(f));
    for (const r of rules) if (r.pattern.test(code)) out.push(`${f}: ${r.why}`);
    if (under(f, "app") && /from\s*["'](@\/models|(\.\.\/)+models)(\/[^"']*)?["']|import\(\s*["']@\/models/.test(code))
      out.push(`${f}: app imports models/ (call lib/data instead)`);
  }
  return out;
}

describe("one database boundary (lib/data)", () => {
  const files = ["app", "lib", "server", "simulators"].flatMap(sources);
  const models = modelNames();

  it("scans the product's sources and knows the models", () => {
    expect(files.filter((f) => f.startsWith("lib/data/")).length).toBeGreaterThan(5);
    expect(models).toEqual(expect.arrayContaining(["Loop", "Alarm", "User", "Site"]));
  });

  it("no SQL or model query outside lib/data", () => {
    expect(dataLayerViolations(files, (f) => fs.readFileSync(path.join(ROOT, f), "utf8"), models)).toEqual([]);
  });

  it("lib/data itself holds the SQL (the scan would see it there)", () => {
    const inData = files.filter((f) => under(f, HOME));
    const seen = inData.filter((f) => dataLayerRules(models).some((r) => r.pattern.test(stripComments(fs.readFileSync(path.join(ROOT, f), "utf8")))));
    expect(seen.length).toBeGreaterThan(10);
  });

  it("catches each kind of violation (the check can fail)", () => {
    const fake: Record<string, string> = {
      "server/a.ts": 'await sequelize.query("SELECT 1", { type: QueryTypes.SELECT });',
      "server/b.ts": "const rows = await db.query<{ id: number }>(sql);",
      "lib/c.ts": "const n = await Loop.count({ where: { tenantId } });",
      "lib/d.ts": "await getDb().models.Site.findOne({ where: { id } });",
      "lib/e.ts": "const sql = `UPDATE users SET name = ? WHERE id = ?`;",
      "lib/f.ts": 'import { Alarm } from "@/models";',
      "app/g.tsx": 'import type { Loop } from "@/models/loop";',
      "server/h.ts": "await sequelize.transaction(async (t) => {});",
      "lib/i.ts": "const s = 'DELETE FROM alarms WHERE id = ?';",
    };
    const v = dataLayerViolations(Object.keys(fake), (f) => fake[f]!, ["Loop", "Alarm", "Site"]);
    expect([...new Set(v.map((s) => s.split(": ")[0]))].sort()).toEqual(Object.keys(fake).sort());
  });

  it("does not flag what is not SQL", () => {
    const fine: Record<string, string> = {
      "lib/a.ts": '// sequelize.query("SELECT 1") is in lib/data\nconst x = "Select a site";',
      "lib/b.ts": 'import type { Loop } from "@/models";\nconst q = new URLSearchParams(s).get("q");',
      "lib/data/c.ts": 'await sequelize.query("SELECT 1");',
      "lib/data/d.ts": 'await sequelize.query("SELECT 1");',
      "server/e.ts": "const loops = await readLoops(sequelize);",
    };
    expect(dataLayerViolations(Object.keys(fine), (f) => fine[f]!, ["Loop", "Alarm"])).toEqual([]);
  });
});
