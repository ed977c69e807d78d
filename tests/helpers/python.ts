import { spawnSync } from "node:child_process";
import { readFileSync } from "node:fs";
import { existsSync } from "node:fs";
import { join } from "node:path";

/**
 * The interpreter every reference check runs: $RG_PYTHON or $PYTHON, else Debian's python3 (where `.ci/run`
 * installs python3-numpy, python3-scipy and python3-protobuf, and with which the committed
 * fixtures were generated), else the first python3 on PATH. A python3 on PATH from another
 * distribution (a pyenv shim, say) may carry another NumPy whose last digits differ from the
 * fixtures', or no SciPy at all, which would silently skip the checks.
 */
export const PYTHON = process.env.RG_PYTHON ?? process.env.PYTHON ?? (existsSync("/usr/bin/python3") ? "/usr/bin/python3" : "python3");

/**
 * Whether PYTHON imports these modules (e.g. "numpy, scipy"). Under CI a missing module is an
 * error, not a skip: a reference check that cannot run must not pass as green.
 */
export function pythonHas(modules: string): boolean {
  const ok = spawnSync(PYTHON, ["-c", `import ${modules}`], { encoding: "utf8" }).status === 0;
  if (!ok && process.env.CI === "true") {
    throw new Error(`the reference checks need ${modules} importable by ${PYTHON} (.ci/run installs python3-numpy, python3-scipy)`);
  }
  return ok;
}

/** Deep comparison: same structure and strings, numbers within 1e-9 relative (platform rounding). */
export function sameData(a: unknown, b: unknown, where = "$"): string | null {
  if (typeof a === "number" && typeof b === "number") {
    return Math.abs(a - b) <= 1e-9 * Math.max(1, Math.abs(a), Math.abs(b)) ? null : `${where}: ${a} != ${b}`;
  }
  if (Array.isArray(a) && Array.isArray(b)) {
    if (a.length !== b.length) return `${where}: length ${a.length} != ${b.length}`;
    for (let i = 0; i < a.length; i++) {
      const d = sameData(a[i], b[i], `${where}[${i}]`);
      if (d) return d;
    }
    return null;
  }
  if (a && b && typeof a === "object" && typeof b === "object") {
    const ka = Object.keys(a).sort();
    const kb = Object.keys(b).sort();
    if (ka.join() !== kb.join()) return `${where}: keys differ`;
    for (const k of ka) {
      const d = sameData((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k], `${where}.${k}`);
      if (d) return d;
    }
    return null;
  }
  return a === b ? null : `${where}: ${String(a)} != ${String(b)}`;
}

/**
 * A committed fixture is stale when its generator (run with `--stdout`) no longer prints the same
 * data, numbers to 1e-9 relative: null when fresh, else what differs or the generator's error.
 */
export function staleFixture(generator: string, fixturePath: string): string | null {
  const run = spawnSync(PYTHON, [generator, "--stdout"], { encoding: "utf8", maxBuffer: 64 << 20, env: { ...process.env, PYTHONDONTWRITEBYTECODE: "1" } });
  if (run.status !== 0) return `${generator} exited ${String(run.status)}: ${run.stderr}`;
  return sameData(JSON.parse(run.stdout), JSON.parse(readFileSync(fixturePath, "utf8")));
}

const referenceDir = join(import.meta.dirname, "..", "reference");

/** A committed reference fixture, tests/reference/fixtures/NAME, parsed. */
export function referenceFixture<T>(name: string): T {
  return JSON.parse(readFileSync(join(referenceDir, "fixtures", name), "utf8")) as T;
}

/** `staleFixture` for a generator in tests/reference and its fixture in tests/reference/fixtures. */
export function staleReference(generator: string, fixture: string): string | null {
  return staleFixture(join(referenceDir, generator), join(referenceDir, "fixtures", fixture));
}
