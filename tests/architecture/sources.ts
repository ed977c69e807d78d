/** The product's TypeScript sources under a folder, as repository paths (shared by the architecture checks). */
import fs from "node:fs";
import path from "node:path";

export const ROOT = path.resolve(import.meta.dirname, "../..");

/** Every .ts/.tsx/.mts file under `dir` (declaration files left out), "lib/data/loops.ts" style. */
export function sources(dir: string): string[] {
  const abs = path.join(ROOT, dir);
  if (!fs.existsSync(abs)) return [];
  const out: string[] = [];
  for (const e of fs.readdirSync(abs, { withFileTypes: true })) {
    const rel = `${dir}/${e.name}`;
    if (e.isDirectory()) out.push(...sources(rel));
    else if (/\.(ts|tsx|mts)$/.test(e.name) && !e.name.endsWith(".d.ts")) out.push(rel);
  }
  return out;
}

export const readSource = (f: string): string => fs.readFileSync(path.join(ROOT, f), "utf8");
