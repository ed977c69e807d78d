/**
 * The folder arrows (DEVELOPERS.md, Folders): a scan of every import in the product's sources
 * fails on a forbidden one. lib/control imports only lib/control and mathjs; lib/domain only
 * itself, lib/control and zod; models only lib/domain (and Sequelize); app never server; lib
 * never server (not even a type); lib/client never the data layer (models, lib/data, server);
 * lib/csv only itself (its readers import it, never the reverse).
 * Common practice (layering); no external source.
 */
import fs from "node:fs";
import path from "node:path";
import { describe, expect, it } from "vitest";
import { ROOT, sources } from "./sources";

const IMPORT =
  /(?:^|[\s;])(?:import|export)\s[^'"]*?from\s*["']([^"']+)["']|import\(\s*["']([^"']+)["']\s*\)|^\s*import\s*["']([^"']+)["']/gm;

/** Every import of a file, resolved to a repository path ("lib/control/roots") or a package name ("mathjs"). */
export function importsOf(file: string, text: string): string[] {
  const out: string[] = [];
  for (const m of text.matchAll(IMPORT)) {
    const spec = m[1] ?? m[2] ?? m[3];
    if (!spec) continue;
    if (spec.startsWith("@/")) out.push(spec.slice(2));
    else if (spec.startsWith("."))
      out.push(path.posix.normalize(path.posix.join(path.posix.dirname(file), spec)));
    else
      out.push(
        spec.startsWith("node:")
          ? spec
          : spec
              .split("/")
              .slice(0, spec.startsWith("@") ? 2 : 1)
              .join("/"),
      );
  }
  return out;
}

const under = (p: string, dir: string) => p === dir || p.startsWith(`${dir}/`);

interface Rule {
  from: string;
  /** Returns why an import is forbidden, or null. */
  check: (target: string, file: string) => string | null;
}

const RULES: Rule[] = [
  {
    from: "lib/control",
    check: (t) =>
      under(t, "lib/control") || t === "mathjs"
        ? null
        : "lib/control imports only lib/control and mathjs",
  },
  {
    from: "lib/domain",
    check: (t) =>
      under(t, "lib/domain") ||
      under(t, "lib/assessment") ||
      under(t, "lib/control") ||
      t === "zod" ||
      t === "mathjs"
        ? null
        : "lib/domain imports only lib/domain, lib/assessment, lib/control and zod",
  },
  // the routine-data assessment is pure domain rules too (browser-safe, no I/O)
  {
    from: "lib/assessment",
    check: (t) =>
      under(t, "lib/assessment") ||
      under(t, "lib/domain") ||
      under(t, "lib/control") ||
      under(t, "lib/csv") ||
      t === "zod"
        ? null
        : "lib/assessment imports only lib/assessment, lib/domain, lib/control, lib/csv and zod",
  },
  // the one CSV layer: its readers (assessment, step tests, backfill) import it, never the reverse
  {
    from: "lib/csv",
    check: (t) => (under(t, "lib/csv") ? null : "lib/csv imports only lib/csv"),
  },
  {
    from: "models",
    check: (t) =>
      under(t, "models") || under(t, "lib/domain") || t === "sequelize" || t.startsWith("node:")
        ? null
        : "models import only lib/domain",
  },
  { from: "app", check: (t) => (under(t, "server") ? "app never imports server" : null) },
  { from: "lib", check: (t) => (under(t, "server") ? "lib never imports server" : null) },
  {
    from: "lib/client",
    check: (t) =>
      under(t, "models") || under(t, "lib/data") || under(t, "lib/db") || under(t, "server")
        ? "lib/client never imports the data layer"
        : null,
  },
];

function violations(files: readonly string[], read: (f: string) => string): string[] {
  const out: string[] = [];
  for (const f of files) {
    const text = read(f);
    for (const rule of RULES) {
      if (!under(f.replace(/\.(ts|tsx|mts)$/, ""), rule.from)) continue;
      for (const t of importsOf(f, text)) {
        const why = rule.check(t, f);
        if (why) out.push(`${f} -> ${t}: ${why}`);
      }
    }
  }
  return out;
}

describe("import arrows", () => {
  const files = ["app", "lib", "models", "server"].flatMap(sources);

  it("scans the product's sources", () => {
    expect(files.filter((f) => f.startsWith("lib/domain/")).length).toBeGreaterThan(5);
    expect(files.filter((f) => f.startsWith("models/")).length).toBeGreaterThan(5);
  });

  it("no forbidden import", () => {
    expect(violations(files, (f) => fs.readFileSync(path.join(ROOT, f), "utf8"))).toEqual([]);
  });

  it("catches each kind of forbidden import (the check can fail)", () => {
    const fake: Record<string, string> = {
      "lib/control/x.ts": 'import { z } from "zod";',
      "lib/domain/x.ts": 'import type { Sequelize } from "sequelize";',
      "models/x.ts": 'import { getConfig } from "@/lib/config";',
      "app/x.tsx": 'import type { AlarmService } from "@/server/alarms/service";',
      "lib/x.ts": 'import type { ServerContext } from "../server/context";',
      "lib/client/x.ts": 'const m = await import("@/lib/data/db/connection");',
      "lib/csv/x.ts": 'import { parseAssessCsv } from "@/lib/assessment";',
    };
    const v = violations(Object.keys(fake), (f) => fake[f]!);
    expect([...new Set(v.map((s) => s.split(" -> ")[0]))].sort()).toEqual(Object.keys(fake).sort());
  });
});
