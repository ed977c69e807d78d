"use client";
/**
 * Data hooks of the console: SWR for what the REST API answers, merged with Socket.IO updates.
 * Every socket listener is removed in its effect's cleanup.
 */
import "client-only";
import { startTransition, useEffect, useMemo, useRef, useState, useSyncExternalStore } from "react";
import useSWR from "swr";
import { DEFAULT_POLICY } from "@/lib/domain/alarms/policy";
import type { AlarmDto, LiveLoopSummary, LoopStateDto, LoopSummary, SampleDto } from "@/lib/domain/types";
import { fetchJson } from "./fetcher";
import { LoopStore } from "./loop-store";
import { getSocket, watchLoop } from "./socket";

/** Accept either a bare array or `{ <key>: [...] }` from the API. */
export function listOf<T>(body: unknown, key: string): T[] {
  if (Array.isArray(body)) return body as T[];
  if (body && typeof body === "object" && Array.isArray((body as Record<string, unknown>)[key])) {
    return (body as Record<string, T[]>)[key] as T[];
  }
  return [];
}

let sharedStore: LoopStore | null = null;
/** The tab's loop store (one per tab, like the socket). */
export function getLoopStore(): LoopStore {
  if (!sharedStore) sharedStore = new LoopStore();
  return sharedStore;
}

/**
 * All loops of the tenant, live: the API's list merged with `loop:state` batches (summaries,
 * LoopStateBrief) once per frame. A loop's full state is `useLoop`'s.
 */
export function useLoops(): { loops: LiveLoopSummary[]; store: LoopStore; error: Error | undefined; isLoading: boolean; connected: boolean } {
  const store = getLoopStore();
  const { data, error, isLoading } = useSWR("/api/loops", (u: string) => fetchJson<unknown>(u), { revalidateOnFocus: true, refreshInterval: 60_000 });
  useEffect(() => {
    if (data !== undefined) store.seed(listOf<LoopSummary>(data, "loops"));
  }, [data, store]);
  const connected = useSocketConnected();
  useEffect(() => {
    const s = getSocket();
    const onState = (batch: Parameters<LoopStore["enqueue"]>[0]) => store.enqueue(batch);
    const onAlarm = (a: AlarmDto) => {
      const l = store.get(a.loopId);
      if (!l) return;
      const rest = l.alarms.filter((x) => x.id !== a.id);
      const keep = a.state !== "normal";
      store.setAlarms(a.loopId, keep ? [...rest, { id: a.id, condition: a.condition, priority: a.priority, state: a.state }] : rest);
    };
    s.on("loop:state", onState);
    s.on("alarm:changed", onAlarm);
    return () => {
      s.off("loop:state", onState);
      s.off("alarm:changed", onAlarm);
    };
  }, [store]);
  // Live batches re-render in a transition: React renders the tiles in slices between frames and
  // a scroll or a click is never stuck behind a batch (useSyncExternalStore would render each
  // batch in one synchronous task).
  const [loops, setLoops] = useState(store.getSnapshot);
  useEffect(() => {
    const on = () => startTransition(() => setLoops(store.getSnapshot()));
    on();
    return store.subscribe(on);
  }, [store]);
  return { loops, store, error: error as Error | undefined, isLoading, connected };
}

function subscribeConnection(cb: () => void): () => void {
  const s = getSocket();
  s.on("connect", cb);
  s.on("disconnect", cb);
  return () => {
    s.off("connect", cb);
    s.off("disconnect", cb);
  };
}

export function useSocketConnected(): boolean {
  return useSyncExternalStore(subscribeConnection, () => getSocket().connected, () => false);
}

/**
 * Full-rate samples of one loop while the component is mounted (`loop:watch` on mount,
 * `loop:unwatch` in cleanup). Keeps the last `keep` samples; `error` holds a refused watch.
 */
export function useLoopSamples(loopId: number, keep = 3600): { samples: SampleDto[]; error: string | null; version: number } {
  const buf = useRef<SampleDto[]>([]);
  const [view, setView] = useState<{ loopId: number; samples: SampleDto[]; version: number }>({ loopId, samples: [], version: 0 });
  const [error, setError] = useState<string | null>(null);
  useEffect(() => {
    const s = getSocket();
    buf.current = [];
    let raf = 0;
    const onSamples = (b: { loopId: number; samples: SampleDto[] }) => {
      if (b.loopId !== loopId) return;
      const arr = buf.current;
      // a bad-quality sample (fault code, out of range) would wreck the trend's scale: it is counted, not drawn
      for (const x of b.samples) if (x.quality !== "bad") arr.push(x);
      if (arr.length > keep) arr.splice(0, arr.length - keep);
      if (!raf)
        raf = requestAnimationFrame(() => {
          raf = 0;
          const copy = buf.current.slice();
          setView((v) => ({ loopId, samples: copy, version: v.version + 1 }));
        });
    };
    s.on("loop:samples", onSamples);
    const unwatch = watchLoop(loopId, (r) => setError(r.ok ? null : r.error));
    return () => {
      s.off("loop:samples", onSamples);
      if (raf) cancelAnimationFrame(raf);
      unwatch();
    };
  }, [loopId, keep]);
  const current = view.loopId === loopId ? view : { samples: [] as SampleDto[], version: 0 };
  return { samples: current.samples, error, version: current.version };
}

/** Alarms matching a filter, refreshed on every `alarm:changed` of the tenant. */
export function useAlarms(qs: string): { alarms: AlarmDto[]; error: Error | undefined; isLoading: boolean; mutate: () => void } {
  const key = `/api/alarms${qs}`;
  const { data, error, isLoading, mutate } = useSWR(key, (u: string) => fetchJson<unknown>(u));
  useEffect(() => {
    const s = getSocket();
    let t: ReturnType<typeof setTimeout> | null = null;
    const on = () => {
      if (t) return;
      t = setTimeout(() => {
        t = null;
        void mutate();
      }, 250);
    };
    s.on("alarm:changed", on);
    return () => {
      s.off("alarm:changed", on);
      if (t) clearTimeout(t);
    };
  }, [mutate]);
  const alarms = useMemo(() => listOf<AlarmDto>(data, "alarms"), [data]);
  return { alarms, error: error as Error | undefined, isLoading, mutate: () => void mutate() };
}

/** A clock that ticks every `ms` (for data ages). */
export function useNow(ms = 1000): number {
  const [now, setNow] = useState(() => Date.now());
  useEffect(() => {
    const id = setInterval(() => setNow(Date.now()), ms);
    return () => clearInterval(id);
  }, [ms]);
  return now;
}

/**
 * One loop, live: `GET /api/loops/[loopId]` merged with the loop's full states (`loop:detail`,
 * sent while the loop is watched; this hook watches it). Keeps the last `trailLength`
 * model-pole sets for the z-plane trail.
 */
export function useLoop(loopId: number, trailLength = 24) {
  const { data, error, isLoading, mutate } = useSWR(`/api/loops/${loopId}`, (u: string) => fetchJson<unknown>(u));
  const base = useMemo(() => {
    if (!data || typeof data !== "object") return null;
    const d = data as Record<string, unknown>;
    return ((d.loop && typeof d.loop === "object" ? d.loop : d) as LoopSummary & Record<string, unknown>) ?? null;
  }, [data]);
  type Live = { loopId: number; state: LoopStateDto; trail: { re: number; im: number }[][] } | null;
  const [liveRaw, setLive] = useState<Live>(null);
  useEffect(() => {
    const s = getSocket();
    let pending: LoopStateDto | null = null;
    let raf = 0;
    const on = (st: LoopStateDto) => {
      if (st.loopId !== loopId) return;
      pending = st;
      if (!raf)
        raf = requestAnimationFrame(() => {
          raf = 0;
          const next = pending;
          pending = null;
          if (!next) return;
          const poles = next.modelPoles.map((p) => ({ re: p.re, im: p.im }));
          setLive((prev) => ({ loopId, state: next, trail: [...(prev && prev.loopId === loopId ? prev.trail : []), poles].slice(-trailLength) }));
        });
    };
    s.on("loop:detail", on);
    const unwatch = watchLoop(loopId);
    return () => {
      s.off("loop:detail", on);
      if (raf) cancelAnimationFrame(raf);
      unwatch();
    };
  }, [loopId, trailLength]);
  const live = liveRaw && liveRaw.loopId === loopId ? liveRaw : null;
  const state = live && (!base?.state || live.state.at >= base.state.at) ? live.state : (base?.state ?? null);
  return { loop: base, state, trail: live?.trail ?? [], error: error as Error | undefined, isLoading, mutate: () => void mutate() };
}

/**
 * The effective decay-ratio levels of a scope (`GET /api/alarm-policies`), so gauges, bands and
 * the worst-first order use the tenant's or the loop's own levels; the built-in defaults until
 * the answer arrives (or when it fails).
 */
export function useDecayLevels(scope: "tenant" | "loop", id?: number): { low: number; high: number } {
  const key = scope === "tenant" ? "/api/alarm-policies?scope=tenant" : id ? `/api/alarm-policies?scope=loop&id=${id}` : null;
  const { data } = useSWR(key, (u: string) => fetchJson<{ effective?: { decayRatio?: { low: number; high: number } } }>(u), { refreshInterval: 60_000 });
  return data?.effective?.decayRatio ?? DEFAULT_POLICY.decayRatio;
}
