/**
 * Route handlers of the historian backfill (engineer): `POST /api/loops/[loopId]/backfills` takes
 * the CSV as a streamed `text/csv` body (`?file=<name>` names it, `?replace=1` trains a new model
 * even when the loop learns live already) and answers when the file is read, with the outcome;
 * `GET` lists the loop's backfills with the running one's progress; `GET`/`DELETE` on
 * `/backfills/[jobId]` read the progress (rate, time left) and cancel. The work runs in the
 * pipeline's BackfillHost (server/backfill); routes reach it through the server context.
 */
import { NextResponse } from "next/server";
import { z } from "zod";
import { requireContext } from "@/lib/auth/guard";
import { ownsLoop } from "@/lib/data/loops";
import { HttpError, NotFoundError, ValidationError } from "@/lib/domain/errors";
import { handle, parseQuery } from "@/lib/http";
import { BACKFILL_UPLOAD_BODY } from "@/lib/request-guard";
import { runningService } from "@/lib/data/server-context";
import { text } from "@/lib/text-input";
import type { TenantContext } from "@/lib/domain/types";
import type { BackfillApi } from "@/lib/domain/backfill";
import { idParam } from "@/lib/admin/route-helpers";

type Params = { params: Promise<{ loopId: string; jobId?: string }> };

class ServiceUnavailableError extends HttpError {
  constructor() {
    super(503, "The telemetry pipeline is not running: backfills need it.");
  }
}

function host(): BackfillApi {
  const b = runningService("pipeline")?.backfill;
  if (!b || typeof b.start !== "function") throw new ServiceUnavailableError();
  return b;
}

async function ownedLoop(ctx: TenantContext, raw: string): Promise<number> {
  const id = idParam(raw, "loopId");
  if (!(await ownsLoop(ctx, id))) throw new NotFoundError("Loop");
  return id;
}

const uploadQuery = z
  .object({
    file: text().trim().min(1).max(255).default("upload.csv"),
    replace: z.enum(["0", "1"]).default("0"),
  })
  .strict();

export const uploadBackfillHandler = handle(async (req: Request, { params }: Params) => {
  const ctx = await requireContext("engineer");
  const loopId = await ownedLoop(ctx, (await params).loopId);
  const q = parseQuery(req, uploadQuery);
  const len = Number(req.headers.get("content-length") ?? NaN);
  if (!req.body || len === 0)
    throw new ValidationError("Send the CSV as the request body (text/csv).");
  const out = await host().start(
    {
      tenantId: ctx.tenantId,
      loopId,
      userId: ctx.userId,
      fileName: q.file,
      totalBytes: Number.isFinite(len) ? len : null,
      replaceModel: q.replace === "1",
    },
    req.body,
  );
  return NextResponse.json({ backfill: out }, { status: out.status === "failed" ? 422 : 201 });
}, BACKFILL_UPLOAD_BODY);

export const listBackfillsHandler = handle(async (_req: Request, { params }: Params) => {
  const ctx = await requireContext("engineer");
  const loopId = await ownedLoop(ctx, (await params).loopId);
  return NextResponse.json(await host().list(ctx.tenantId, loopId));
});

async function ownedJob(ctx: TenantContext, p: Params["params"]) {
  const { loopId: rawLoop, jobId: rawJob } = await p;
  const loopId = await ownedLoop(ctx, rawLoop);
  const job = host().get(ctx.tenantId, idParam(rawJob, "jobId"));
  if (!job || job.loopId !== loopId) throw new NotFoundError("Backfill");
  return job;
}

export const backfillProgressHandler = handle(async (_req: Request, { params }: Params) => {
  const ctx = await requireContext("engineer");
  return NextResponse.json({ backfill: (await ownedJob(ctx, params)).progress() });
});

export const cancelBackfillHandler = handle(async (_req: Request, { params }: Params) => {
  const ctx = await requireContext("engineer");
  const job = await ownedJob(ctx, params);
  job.cancel();
  return NextResponse.json({ backfill: job.progress() }, { status: 202 });
});
