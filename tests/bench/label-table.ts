/**
 * The tables both labelled benchmarks print (bench:assess on our simulators' recordings,
 * bench:crosscheck on the independent Python set): accuracy per label and the confusion matrix.
 */
export const ALL_LABELS = ["healthy", "aggressive-tuning", "sluggish-tuning", "valve-stiction", "external-disturbance", "saturated", "sensor-fault", "manual", "undetermined"] as const;
const SHORT: Record<string, string> = {
  healthy: "heal",
  "aggressive-tuning": "aggr",
  "sluggish-tuning": "slug",
  "valve-stiction": "stic",
  "external-disturbance": "extd",
  saturated: "satu",
  "sensor-fault": "sens",
  manual: "manu",
  undetermined: "undt",
};

export interface LabelledOutcome {
  label: string;
  verdict: string;
  correct: boolean;
}

export const pct = (a: number, b: number) => (b === 0 ? "   —" : `${((100 * a) / b).toFixed(0).padStart(3)} %`);

/** Accuracy per label (labels without recordings are skipped when `skipEmpty`). */
export function printAccuracy(res: LabelledOutcome[], skipEmpty = false): void {
  console.log("label                  n  right  accuracy");
  for (const l of ALL_LABELS) {
    const rows = res.filter((r) => r.label === l);
    if (skipEmpty && rows.length === 0) continue;
    const ok = rows.filter((r) => r.correct).length;
    console.log(`${l.padEnd(21)}${String(rows.length).padStart(3)}  ${String(ok).padStart(5)}  ${pct(ok, rows.length)}`);
  }
}

/** Confusion matrix, rows the truth and columns the verdict. */
export function printConfusion(res: LabelledOutcome[]): void {
  console.log("\nconfusion (rows: truth, columns: verdict)");
  console.log(`${"".padEnd(21)}${ALL_LABELS.map((l) => SHORT[l]!.padStart(5)).join("")}`);
  for (const l of ALL_LABELS) {
    const rows = res.filter((r) => r.label === l);
    if (l === "undetermined" && rows.length === 0) continue;
    console.log(`${l.padEnd(21)}${ALL_LABELS.map((v) => String(rows.filter((r) => r.verdict === v).length || ".").padStart(5)).join("")}`);
  }
}
