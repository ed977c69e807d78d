/**
 * `server-only` and `client-only` marks (DEVELOPERS.md, Folders). Next resolves `server-only` to
 * an empty module only under the react-server condition (route handlers, server components);
 * plain Node (the custom server under tsx, scripts, benchmarks) gets the module that throws. So a
 * module marked `server-only` must never be reachable from server/, scripts/, simulators/ or
 * tests/bench through value imports, and a module marked `client-only` must never be imported by
 * a server component (a file outside lib/client without "use client").
 * Common practice (a layering check); no external source.
 */
import fs from "node:fs";
import path from "node:path";
import { describe, expect, it } from "vitest";
import { ROOT, sources } from "./sources";

const IMPORT = /(?:^|[\s;])(import|export)(\s+type)?\s[^'"]*?from\s*["']([^"']+)["']|import\(\s*["']([^"']+)["']\s*\)|^\s*import\s*["']([^"']+)["']/gm;

type Graph = Map<string, { value: string[]; bare: string[] }>;

/** Value imports resolved to repository files, and bare imports ("server-only"), per file. */
function graphOf(texts: Map<string, string>): Graph {
  const g: Graph = new Map();
  const resolve = (from: string, spec: string): string | null => {
    const p = spec.startsWith("@/") ? spec.slice(2) : spec.startsWith(".") ? path.posix.normalize(path.posix.join(path.posix.dirname(from), spec)) : null;
    if (p === null) return null;
    for (const c of [p, `${p}.ts`, `${p}.tsx`, `${p}/index.ts`, `${p}/index.tsx`]) if (texts.has(c)) return c;
    return null;
  };
  for (const [f, text] of texts) {
    const value: string[] = [];
    const bare: string[] = [];
    for (const m of text.matchAll(IMPORT)) {
      if (m[2]) continue; // `import type` / `export type`: erased, never loaded
      const spec = m[3] ?? m[4] ?? m[5];
      if (!spec) continue;
      const r = resolve(f, spec);
      if (r) value.push(r);
      else bare.push(spec);
    }
    g.set(f, { value, bare });
  }
  return g;
}

const NODE_ENTRIES = /^(server|scripts|simulators|tests\/bench)\//;
const isClientModule = (text: string) => /^\s*(\/\*[\s\S]*?\*\/\s*)?["']use client["']/.test(text);

export function markViolations(texts: Map<string, string>): string[] {
  const g = graphOf(texts);
  const out: string[] = [];
  // Everything plain Node loads, with the path that reaches it.
  const via = new Map<string, string>();
  const stack = [...g.keys()].filter((f) => NODE_ENTRIES.test(f));
  for (const f of stack) via.set(f, f);
  while (stack.length) {
    const f = stack.pop()!;
    for (const d of g.get(f)?.value ?? [])
      if (!via.has(d)) {
        via.set(d, `${via.get(f)} -> ${d}`);
        stack.push(d);
      }
  }
  for (const [f, { bare }] of g) if (bare.includes("server-only") && via.has(f)) out.push(`${f} is marked server-only but plain Node loads it: ${via.get(f)}`);
  for (const [f, { value }] of g) {
    if (f.startsWith("lib/client/") || isClientModule(texts.get(f)!)) continue;
    for (const d of value) if (g.get(d)?.bare.includes("client-only")) out.push(`${f} (a server module) imports ${d}, which is marked client-only`);
  }
  return out;
}

describe("server-only / client-only marks", () => {
  const files = ["app", "lib", "server", "scripts", "simulators", "models", "tests/bench"].flatMap(sources);
  const texts = new Map(files.map((f) => [f, fs.readFileSync(path.join(ROOT, f), "utf8")]));

  it("finds marked modules", () => {
    const marked = (pkg: string) => files.filter((f) => new RegExp(`^import "${pkg}";`, "m").test(texts.get(f)!));
    expect(marked("server-only").filter((f) => f.startsWith("lib/data/")).length).toBeGreaterThan(5);
    expect(marked("client-only").filter((f) => f.startsWith("lib/client/")).length).toBeGreaterThan(5);
  });

  it("no server-only module is loaded by plain Node, no client-only module by a server component", () => {
    expect(markViolations(texts)).toEqual([]);
  });

  it("catches both kinds of violation (the check can fail)", () => {
    const fake = new Map([
      ["server/a.ts", 'import { listLoops } from "@/lib/data/b";'],
      ["lib/data/b.ts", 'import "server-only";\nexport const listLoops = 1;'],
      ["lib/data/c.ts", 'import "server-only";\nexport const x = 1;'],
      ["scripts/d.ts", 'import type { x } from "@/lib/data/c";'],
      ["lib/client/e.ts", 'import "client-only";\nexport const y = 1;'],
      ["app/page.tsx", 'import { y } from "@/lib/client/e";'],
      ["app/widget.tsx", '"use client";\nimport { y } from "@/lib/client/e";'],
    ]);
    const v = markViolations(fake);
    expect(v).toHaveLength(2);
    expect(v[0]).toContain("lib/data/b.ts is marked server-only but plain Node loads it: server/a.ts -> lib/data/b.ts");
    expect(v[1]).toContain("app/page.tsx (a server module) imports lib/client/e.ts");
  });
});
