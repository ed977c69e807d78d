/**
 * `npm test`: the whole vitest suite (unit, integration with a throw-away MariaDB and the real
 * broker, end-to-end in Debian's Chromium), then one plain closing line with the counts.
 * Extra arguments go to vitest (e.g. `npm test -- tests/control`).
 */
import { spawn } from "node:child_process";
import { mkdirSync, readFileSync, existsSync } from "node:fs";
import path from "node:path";

const out = path.join("tests", "artifacts", "vitest-results.json");
mkdirSync(path.dirname(out), { recursive: true });

const args = [
  "vitest",
  "run",
  "--reporter=default",
  "--reporter=json",
  `--outputFile.json=${out}`,
  ...process.argv.slice(2),
];
const child = spawn("npx", args, { stdio: "inherit", env: process.env });
for (const sig of ["SIGINT", "SIGTERM"] as const) process.on(sig, () => child.kill(sig));

child.on("exit", (code, signal) => {
  let line = "tests: no result file was written";
  if (existsSync(out)) {
    const r = JSON.parse(readFileSync(out, "utf8")) as {
      numPassedTests: number;
      numFailedTests: number;
      numPendingTests: number;
      numTodoTests: number;
      testResults: { status: string; assertionResults: { status: string }[] }[];
    };
    // A file that fails to load or whose hooks throw has no failed test of its own: count it once.
    const brokenFiles = r.testResults.filter(
      (f) => f.status === "failed" && !f.assertionResults.some((a) => a.status === "failed"),
    ).length;
    const failed = r.numFailedTests + brokenFiles;
    line = `tests: ${r.numPassedTests} passed, ${failed} failed, ${r.numPendingTests + r.numTodoTests} skipped`;
  }
  console.log(line);
  process.exit(code ?? (signal ? 1 : 0));
});
