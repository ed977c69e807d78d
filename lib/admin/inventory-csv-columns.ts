/** The columns of the loop inventory sheet, in file order (no I/O, no CSV library: the browser reads them too). */
import { LOOP_KINDS } from "@/lib/domain/types";
import type { LoopFields } from "./loop-schema";

export type Cell = "text" | "number" | "int" | "numberOrNone" | "bool" | "enum";
export interface Column {
  name: string;
  field: keyof LoopFields | "site" | "area";
  cell: Cell;
  values?: readonly string[];
}

export const INVENTORY_COLUMNS: readonly Column[] = [
  { name: "tag", field: "tag", cell: "text" },
  { name: "description", field: "description", cell: "text" },
  { name: "site", field: "site", cell: "text" },
  { name: "area", field: "area", cell: "text" },
  { name: "kind", field: "kind", cell: "enum", values: LOOP_KINDS },
  { name: "units", field: "units", cell: "text" },
  { name: "pv_lo", field: "pvLo", cell: "number" },
  { name: "pv_hi", field: "pvHi", cell: "number" },
  { name: "mv_lo", field: "mvLo", cell: "number" },
  { name: "mv_hi", field: "mvHi", cell: "number" },
  { name: "mv_units", field: "mvUnits", cell: "text" },
  { name: "action", field: "action", cell: "enum", values: ["direct", "reverse"] },
  { name: "form", field: "form", cell: "enum", values: ["ideal", "parallel", "series"] },
  { name: "gain_kind", field: "gainKind", cell: "enum", values: ["gain", "pb"] },
  { name: "gain", field: "gainValue", cell: "number" },
  { name: "ti", field: "tiValue", cell: "numberOrNone" },
  { name: "ti_units", field: "tiUnits", cell: "enum", values: ["s", "min", "repeats-per-min"] },
  { name: "td", field: "tdValue", cell: "number" },
  { name: "td_units", field: "tdUnits", cell: "enum", values: ["s", "min"] },
  { name: "derivative_filter_s", field: "tfS", cell: "numberOrNone" },
  { name: "telemetry_period_s", field: "telemetryPeriodS", cell: "number" },
  { name: "controller_period_s", field: "controllerPeriodS", cell: "number" },
  { name: "estimation_period_s", field: "estimationPeriodS", cell: "number" },
  { name: "na", field: "na", cell: "int" },
  { name: "nb", field: "nb", cell: "int" },
  { name: "nk", field: "nk", cell: "int" },
  { name: "baseline_time_constant_s", field: "baselineTimeConstantS", cell: "numberOrNone" },
  { name: "enabled", field: "enabled", cell: "bool" },
];
