/** Historian backfills of a loop: GET lists them (engineer), POST uploads a CSV (text/csv, streamed; engineer). */
import { listBackfillsHandler, uploadBackfillHandler } from "@/lib/backfill/routes";

export const dynamic = "force-dynamic";
export const GET = listBackfillsHandler;
export const POST = uploadBackfillHandler;
