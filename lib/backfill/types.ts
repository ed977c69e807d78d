/** Shapes of the historian backfill as the console reads them (the work itself is in server/backfill). */
export type { BackfillProgress, BackfillRow } from "@/lib/domain/backfill";
