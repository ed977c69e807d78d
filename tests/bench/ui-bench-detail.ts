/**
 * Part 2 of the UI benchmark: the loop detail with 24 h of 1 Hz data, from the history answer's
 * arrival to the frame that shows every trend, down-sampled, raw as columns and raw as rows.
 */
import type { Page, Route } from "playwright-core";
import type { LoopSummary } from "@/lib/domain/types";
import { historyColumns } from "@/lib/data/loop-history";
import { percentile, profile } from "./ui-bench-frames";

export async function measureLoopDetail(page: Page, baseUrl: string, loop: LoopSummary, rand: () => number): Promise<void> {
  const N = 86_400;
  const end = Date.now();
  const start = end - N * 1000;
  const rows = new Array(N);
  let pv = 50;
  for (let k = 0; k < N; k++) {
    const sp = k % 3600 < 1800 ? 50 : 55;
    pv += 0.05 * (sp - pv) + (rand() - 0.5) * 0.4;
    rows[k] = {
      t: start + k * 1000,
      sp,
      pv: +pv.toFixed(3),
      mv: +(40 + 0.8 * (sp - pv)).toFixed(3),
      radius: +(0.9 + 0.02 * Math.sin(k / 5000)).toFixed(4),
    };
  }
  const downsample = (maxPoints: number) => {
    const per = Math.ceil(N / maxPoints);
    const out = [];
    for (let b = 0; b < N; b += per) {
      const seg = rows.slice(b, b + per) as {
        t: number;
        sp: number;
        pv: number;
        mv: number;
        radius: number;
      }[];
      const stat = (k: "sp" | "pv" | "mv" | "radius") => {
        let mn = Infinity;
        let mx = -Infinity;
        let s = 0;
        for (const r of seg) {
          mn = Math.min(mn, r[k]);
          mx = Math.max(mx, r[k]);
          s += r[k];
        }
        return { min: mn, mean: s / seg.length, max: mx };
      };
      out.push({
        t: new Date(seg[0]!.t).toISOString(),
        sp: stat("sp"),
        pv: stat("pv"),
        mv: stat("mv"),
        radius: stat("radius"),
        n: seg.length,
      });
    }
    // the answer the page asks for (shape=columns), made by the server's own function
    return historyColumns({ loopId: loop.id, from: new Date(start).toISOString(), to: new Date(end).toISOString(), tier: "1s", bucketMs: per * 1000, points: out, poles: [] });
  };
  // all raw points as columns (what a columnar answer of every sample carries), and as rows
  const rawColumns = {
    loopId: loop.id,
    shape: "columns",
    t: rows.map((r) => r.t),
    sp: rows.map((r) => r.sp),
    pv: rows.map((r) => r.pv),
    mv: rows.map((r) => r.mv),
    radius: rows.map((r) => r.radius),
    poles: [],
  };
  await page.route(`**/api/loops/${loop.id}`, (r: Route) => r.fulfill({ json: { loop } }));
  const results: Record<string, number[]> = { "cold (first)": [], "down-sampled": [], raw: [], "raw as rows": [] };
  for (const mode of [
    "cold (first)",
    "down-sampled",
    "raw",
    "down-sampled",
    "raw",
    "down-sampled",
    "raw",
    "raw as rows",
  ] as const) {
    await page.unroute(`**/api/loops/${loop.id}/history**`);
    let points = 0;
    await page.route(`**/api/loops/${loop.id}/history**`, (r: Route) => {
      const u = new URL(r.request().url());
      const maxPoints = Number(u.searchParams.get("maxPoints") ?? 1000);
      if (mode === "raw as rows") {
        points = rows.length;
        return r.fulfill({ json: { loopId: loop.id, points: rows, poles: [] } });
      }
      // "cold (first)": the first navigation to the page (scripts not yet compiled), down-sampled
      const body = mode === "raw" ? rawColumns : downsample(maxPoints);
      points = body.t.length;
      return r.fulfill({ json: body });
    });
    const open = async () => {
      await page.goto(`${baseUrl}/loops/${loop.id}?range=24h`);
      return waitDrawn();
    };
    const waitDrawn = () =>
      page.waitForFunction(
        () => {
          const hosts = [
            ...document.querySelectorAll<HTMLElement>('[data-testid="trend-chart"]'),
          ];
          const entry = performance
            .getEntriesByType("resource")
            .find((e) => e.name.includes("/history")) as PerformanceResourceTiming | undefined;
          if (!entry || hosts.length < 3) return null;
          const drawn = hosts.map((h) => ({
            n: Number(h.dataset.points ?? 0),
            at: Number(h.dataset.drawnAt ?? 0),
          }));
          // every chart has drawn the history (more than the few live points)
          if (drawn.some((d) => d.n < 100 || d.at < entry.responseEnd)) return null;
          return Math.max(...drawn.map((d) => d.at)) - entry.responseEnd;
        },
        undefined,
        { timeout: 120_000, polling: 50 },
      );
    let ms: Awaited<ReturnType<typeof open>> | null = null;
    // BENCH_PROFILE: a CPU profile of the first raw render (where the time after the answer goes)
    if (process.env.BENCH_PROFILE && mode === (process.env.BENCH_PROFILE_MODE ?? "raw") && results[mode]!.length === 0)
      await profile(page, `loop detail, ${mode} 24 h`, async () => {
        ms = await open();
      });
    else ms = await open();
    const v = (await ms!.jsonValue()) as number;
    results[mode]!.push(v);
    console.log(
      `loop detail, 24 h at 1 Hz, ${mode.padEnd(12)} ${String(points).padStart(6)} points per series: history answer -> drawn ${v.toFixed(0)} ms`,
    );
  }
  for (const [mode, xs] of Object.entries(results)) {
    if (mode === "raw as rows") {
      console.log(`  ${mode.padEnd(12)} ${xs[0]!.toFixed(0)} ms (one run, for comparison: one JSON object per point, the rows shape)`);
      continue;
    }
    if (mode === "cold (first)") {
      console.log(`  ${mode.padEnd(12)} ${xs[0]!.toFixed(0)} ms (one run: the first navigation to the page in this browser, down-sampled answer; not in the medians)`);
      continue;
    }
    const med = percentile(xs, 50);
    console.log(
      `  ${mode.padEnd(12)} median ${med.toFixed(0)} ms, ratio to the 200 ms target ${(med / 200).toFixed(2)}`,
    );
  }
}
