"use client";
/**
 * Routine-data findings in the browser: the tenant's latest finding per loop from
 * `GET /api/work-list/findings`, kept current by `loop:finding` events; one loop's finding and
 * full assessment from `GET /api/loops/:loopId/finding`. Shared by the wall tile, the loop list
 * and the loop detail (one SWR key each, so many marks make one request).
 */
import "client-only";
import { useEffect, useMemo } from "react";
import useSWR from "swr";
import type { LoopAssessmentReport } from "@/lib/assessment/types";
import type { LoopFinding } from "@/lib/domain/findings";
import { fetchJson } from "./fetcher";
import { getSocket } from "./socket";

const ALL_KEY = "/api/work-list/findings";

/** Latest finding of every assessed loop of the tenant, by loop id. */
export function useFindings(): { findings: Map<number, LoopFinding>; error: Error | undefined } {
  const { data, error, mutate } = useSWR(ALL_KEY, (u: string) => fetchJson<{ findings: LoopFinding[] }>(u), { revalidateOnFocus: false });
  useEffect(() => {
    const s = getSocket();
    const on = (f: LoopFinding) => {
      void mutate((cur) => ({ findings: [...(cur?.findings ?? []).filter((x) => x.loopId !== f.loopId), f] }), { revalidate: false });
    };
    s.on("loop:finding", on);
    return () => {
      s.off("loop:finding", on);
    };
  }, [mutate]);
  const findings = useMemo(() => new Map((data?.findings ?? []).map((f) => [f.loopId, f])), [data]);
  return { findings, error: error as Error | undefined };
}

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
