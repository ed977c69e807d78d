/** Shapes of the historian backfill as the console reads them (the work itself is in server/backfill). */
export type { BackfillProgress } from "@/server/backfill/job";
export type { BackfillRow } from "@/server/backfill/store";
