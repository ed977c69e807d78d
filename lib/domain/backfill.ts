/**
 * The historian backfill as the rest of the product sees it (the work itself is server/backfill):
 * its progress and records, and the service interface the routes call.
 */
export const SAMPLE_REJECT_REASONS = [
  "bad-header",
  "bad-row",
  "bad-time",
  "missing-value",
  "non-finite",
  "bad-shape",
  "future",
  "duplicate",
  "out-of-order",
  "beyond-retention",
  "overlap",
] as const;
export type SampleRejectReason = (typeof SAMPLE_REJECT_REASONS)[number];

export type ByteSource = AsyncIterable<Uint8Array | string> | ReadableStream<Uint8Array>;

export type BackfillStatus = "running" | "done" | "cancelled" | "failed";

export interface BackfillRow {
  id: number;
  loopId: number;
  userId: number | null;
  fileName: string;
  status: BackfillStatus;
  fromT: number | null;
  toT: number | null;
  bytes: number;
  accepted: number;
  rejected: number;
  minuteOnly: number;
  trained: boolean;
  summary: unknown;
  startedAt: string;
  finishedAt: string | null;
}

export interface BackfillProgress {
  id: number;
  loopId: number;
  fileName: string;
  status: BackfillStatus;
  bytesRead: number;
  totalBytes: number | null;
  accepted: number;
  rejected: number;
  /** Accepted samples that went to the 1-minute tier only (older than the per-second retention). */
  minuteOnly: number;
  rejections: Partial<Record<SampleRejectReason, number>>;
  /** The first rejections with their lines (at most 200). */
  firstRejections: { line: number; reason: SampleRejectReason; detail: string }[];
  quality: Record<string, number>;
  fromT: number | null;
  toT: number | null;
  samplesPerS: number;
  /** Seconds left at the current byte rate (null without a declared size). */
  etaS: number | null;
  training: boolean;
  trained: boolean;
  message: string | null;
}

export interface BackfillRequest {
  tenantId: number;
  loopId: number;
  userId: number | null;
  fileName: string;
  totalBytes: number | null;
  replaceModel: boolean;
}

/** A running or recently finished backfill job. */
export interface BackfillJobHandle {
  readonly loopId: number;
  progress(): BackfillProgress;
  cancel(): void;
}

/** What the pipeline's backfill host offers the routes. */
export interface BackfillApi {
  start(
    req: BackfillRequest,
    source: ByteSource,
    onOpen?: (id: number) => void,
  ): Promise<BackfillProgress>;
  list(
    tenantId: number,
    loopId: number,
  ): Promise<{ running: BackfillProgress | null; recorded: BackfillRow[] }>;
  get(tenantId: number, id: number): BackfillJobHandle | null;
}
