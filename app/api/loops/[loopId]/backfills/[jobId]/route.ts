/** One running or recent backfill: GET its progress, DELETE cancels it (engineer). */
import { backfillProgressHandler, cancelBackfillHandler } from "@/lib/backfill/routes";

export const dynamic = "force-dynamic";
export const GET = backfillProgressHandler;
export const DELETE = cancelBackfillHandler;
