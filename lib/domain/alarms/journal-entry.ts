/**
 * One alarm transition as the journal (server/alarms/journal.ts) records it and the data layer
 * (lib/data/alarms) writes it to MariaDB: the shape both sides share.
 */
import type { AlarmActionKind, AlarmPoint } from "./state-machine";
import type { AlarmCondition, AlarmState } from "../types";

/** The stored alarm point plus what the pages show. */
export interface PointSnapshot extends AlarmPoint {
  value: number | null;
  level: number | null;
  message: string;
}

export interface JournalEntry {
  seq: number;
  /** Epoch ms of the transition. */
  at: number;
  tenantId: number;
  alarmId: number;
  loopId: number;
  areaId: number | null;
  condition: AlarmCondition;
  kind: AlarmActionKind;
  from: AlarmState;
  to: AlarmState;
  userId: number | null;
  comment: string | null;
  announce: boolean;
  occurrence: "start" | "end" | null;
  /** The alarm point after the transition. */
  point: PointSnapshot;
  data: Record<string, unknown> | null;
}

