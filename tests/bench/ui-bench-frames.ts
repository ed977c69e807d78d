/**
 * The UI benchmark's measurements in the page: frame intervals and long tasks of one phase (an
 * in-page recorder), their report, and the optional CPU profile and Chromium trace of a phase.
 */
import fs from "node:fs";
import type { Page } from "playwright-core";

export function percentile(xs: number[], p: number): number {
  if (xs.length === 0) return NaN;
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.min(s.length - 1, Math.floor((p / 100) * s.length))]!;
}

/** In-page recorder, passed as source text (tsx would wrap named functions with a helper the page lacks). */
const RECORDER = `(async ({ ms, scroll }) => new Promise((resolve) => {
  const frames = [];
  const longTasks = [];
  const obs = new PerformanceObserver((l) => { for (const e of l.getEntries()) longTasks.push(e.duration); });
  try { obs.observe({ type: "longtask", buffered: false }); } catch { /* frames only */ }
  let last = performance.now();
  const end = last + ms;
  let dir = 1;
  let acc = 0;
  function step(t) {
    const last0 = last;
    frames.push(t - last);
    last = t;
    if (scroll) {
      // 2,400 px/s whatever the frame rate (40 px per 60 Hz frame), so both runs scroll alike
      acc += 2.4 * (t - last0);
      const px = Math.trunc(acc);
      acc -= px;
      if (px > 0) window.scrollBy(0, px * dir);
      if (window.scrollY + window.innerHeight >= document.body.scrollHeight - 5 || window.scrollY <= 0) dir = -dir;
    }
    if (t < end) requestAnimationFrame(step);
    else { obs.disconnect(); resolve({ frames: frames.slice(1), longTasks }); }
  }
  requestAnimationFrame(step);
}))`;

/** Frames and long tasks of one phase; a page that produces no frame for a minute past the phase's end is reported as stalled. */
export async function recordFrames(
  page: Page,
  ms: number,
  scroll: boolean,
): Promise<{ frames: number[]; longTasks: number[]; stalled?: boolean }> {
  let timer: ReturnType<typeof setTimeout> | undefined;
  const stalled = new Promise<{ frames: number[]; longTasks: number[]; stalled: boolean }>(
    (resolve) => {
      timer = setTimeout(() => resolve({ frames: [], longTasks: [], stalled: true }), ms + 60_000);
    },
  );
  const run = page.evaluate(`${RECORDER}(${JSON.stringify({ ms, scroll })})`) as Promise<{
    frames: number[];
    longTasks: number[];
  }>;
  try {
    return await Promise.race([run, stalled]);
  } finally {
    clearTimeout(timer);
  }
}

export function report(
  label: string,
  r: { frames: number[]; longTasks: number[]; stalled?: boolean },
): { p95: number } {
  if (r.stalled) {
    console.log(
      `${label.padEnd(44)} STALLED: no frame for 60 s past the phase's end; the rest of this run is skipped`,
    );
    return { p95: NaN };
  }
  const p95 = percentile(r.frames, 95);
  console.log(
    `${label.padEnd(44)} frames ${String(r.frames.length).padStart(5)}  p50 ${percentile(r.frames, 50).toFixed(1)} ms  p95 ${p95.toFixed(1)} ms  p99 ${percentile(r.frames, 99).toFixed(1)} ms  long tasks ${r.longTasks.length} (${r.longTasks.reduce((a, b) => a + b, 0).toFixed(0)} ms)`,
  );
  return { p95 };
}

/**
 * BENCH_PROFILE=1: a CPU profile of the page (Chrome DevTools Protocol `Profiler`) around one
 * phase, printed as the functions with the most self time (where the frame time goes).
 */
export async function profile(page: Page, label: string, run: () => Promise<unknown>): Promise<void> {
  const cdp = await page.context().newCDPSession(page);
  await cdp.send("Profiler.enable");
  await cdp.send("Profiler.setSamplingInterval", { interval: 200 });
  await cdp.send("Profiler.start");
  await run();
  const { profile: prof } = (await cdp.send("Profiler.stop")) as {
    profile: {
      nodes: {
        id: number;
        callFrame: { functionName: string; url: string; lineNumber: number; columnNumber: number };
      }[];
      samples: number[];
      timeDeltas: number[];
    };
  };
  const byId = new Map(prof.nodes.map((n) => [n.id, n]));
  const self = new Map<string, number>();
  let total = 0;
  prof.samples.forEach((id, i) => {
    const n = byId.get(id);
    const dt = prof.timeDeltas[i] ?? 0;
    total += dt;
    if (!n) return;
    const cf = n.callFrame;
    const key = `${cf.functionName || "(anonymous)"} ${cf.url.split("/").pop() ?? ""}:${cf.lineNumber + 1}:${cf.columnNumber + 1}`;
    self.set(key, (self.get(key) ?? 0) + dt);
  });
  console.log(`profile, ${label}: ${(total / 1000).toFixed(0)} ms sampled; most self time:`);
  for (const [k, us] of [...self.entries()].sort((a, b) => b[1] - a[1]).slice(0, 25))
    console.log(`  ${(us / 1000).toFixed(0).padStart(6)} ms  ${k}`);
  await cdp.send("Profiler.disable");
  await cdp.detach();
}

/**
 * BENCH_PROFILE=trace: a Chromium performance trace (CDP `Tracing`, devtools.timeline) around one
 * phase, printed as total time per renderer main-thread event (style, layout, paint, script...).
 */
export async function trace(page: Page, label: string, run: () => Promise<unknown>): Promise<void> {
  const cdp = await page.context().newCDPSession(page);
  const events: {
    name: string;
    ph: string;
    ts?: number;
    dur?: number;
    tid: number;
    pid: number;
    args?: Record<string, unknown>;
  }[] = [];
  cdp.on("Tracing.dataCollected", (e) => {
    for (const x of e.value as unknown as typeof events) events.push(x);
  });
  const done = new Promise<void>((r) => cdp.once("Tracing.tracingComplete", () => r()));
  await cdp.send("Tracing.start", {
    categories: "devtools.timeline,disabled-by-default-devtools.timeline",
    transferMode: "ReportEvents",
  });
  await run();
  await cdp.send("Tracing.end");
  await done;
  if (process.env.BENCH_TRACE_DUMP)
    fs.writeFileSync(
      `${process.env.BENCH_TRACE_DUMP}-${label.replace(/\W+/g, "_")}.json`,
      JSON.stringify(events),
    );
  // the renderer main thread: the thread that ran most top-level RunTask... take the one with most Layout events
  const layoutsBy = new Map<string, number>();
  for (const e of events)
    if (e.name === "Layout" || e.name === "UpdateLayoutTree")
      layoutsBy.set(`${e.pid}:${e.tid}`, (layoutsBy.get(`${e.pid}:${e.tid}`) ?? 0) + 1);
  const main = [...layoutsBy.entries()].sort((a, b) => b[1] - a[1])[0]?.[0];
  const tot = new Map<string, { n: number; us: number }>();
  for (const e of events) {
    if (`${e.pid}:${e.tid}` !== main || e.ph !== "X" || e.dur === undefined) continue;
    const t = tot.get(e.name) ?? { n: 0, us: 0 };
    t.n++;
    t.us += e.dur;
    tot.set(e.name, t);
  }
  console.log(
    `trace, ${label}: main-thread events by total duration (nested events counted in their parents too)`,
  );
  for (const [k, v] of [...tot.entries()].sort((a, b) => b[1].us - a[1].us).slice(0, 22))
    console.log(`  ${(v.us / 1000).toFixed(0).padStart(6)} ms  ${String(v.n).padStart(5)}x  ${k}`);
  // Main-thread work per frame: every top-level task counted in the frame (animation frame) it starts in.
  const onMain = events.filter(
    (e) =>
      `${e.pid}:${e.tid}` === main && e.ph === "X" && e.ts !== undefined && e.dur !== undefined,
  );
  const frameStarts = onMain
    .filter((e) => e.name === "FireAnimationFrame")
    .map((e) => e.ts!)
    .sort((a, b) => a - b);
  const busy = new Array<number>(frameStarts.length + 1).fill(0);
  for (const e of onMain) {
    if (e.name !== "RunTask") continue;
    let lo = 0;
    let hi = frameStarts.length;
    while (lo < hi) {
      const mid = (lo + hi) >> 1;
      if (frameStarts[mid]! <= e.ts!) lo = mid + 1;
      else hi = mid;
    }
    busy[lo]! += e.dur! / 1000;
  }
  const perFrame = busy.slice(1, -1);
  if (perFrame.length)
    console.log(
      `  main-thread work per frame (tasks by the frame they start in): p50 ${percentile(perFrame, 50).toFixed(1)} ms  p95 ${percentile(perFrame, 95).toFixed(1)} ms  max ${Math.max(...perFrame).toFixed(1)} ms over ${perFrame.length} frames`,
    );
  await cdp.detach();
}

export class Stalled extends Error {}
