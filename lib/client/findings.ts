"use client";
/**
 * A loop's routine-data assessment report in the browser (the evidence panel's plots), from
 * `GET /api/loops/:loopId/finding`, refetched on `loop:finding`. The verdict itself is carried in
 * the loop's assessment (`state.routine`) that tiles, the loop list and the detail read.
 */
import "client-only";
import { useEffect } from "react";
import useSWR from "swr";
import type { LoopAssessmentReport } from "@/lib/assessment/types";
import type { LoopFinding } from "@/lib/domain/findings";
import { fetchJson } from "./fetcher";
import { getSocket } from "./socket";

/** One loop's finding and the full assessment behind it (refetched when a new finding arrives). */
export function useLoopFinding(loopId: number): { finding: LoopFinding | null; report: LoopAssessmentReport | null; error: Error | undefined; isLoading: boolean } {
  const key = `/api/loops/${loopId}/finding`;
  const { data, error, isLoading, mutate } = useSWR(key, (u: string) => fetchJson<{ finding: LoopFinding | null; report: LoopAssessmentReport | null }>(u), { revalidateOnFocus: false });
  useEffect(() => {
    const s = getSocket();
    const on = (f: LoopFinding) => {
      if (f.loopId === loopId) void mutate();
    };
    s.on("loop:finding", on);
    return () => {
      s.off("loop:finding", on);
    };
  }, [loopId, mutate]);
  return { finding: data?.finding ?? null, report: data?.report ?? null, error: error as Error | undefined, isLoading };
}
