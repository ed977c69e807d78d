/**
 * Size of the rim forecast's drift in the checkpoints (`npm run bench:drift-checkpoint`; prints,
 * asserts nothing; docs/architecture.md §6, "Checkpoints"): the rim-forecast harness's drift (radius
 * 0.90 -> 1.0 over 10 h, seed 9100, 5 s samples) through one tracker for 5 h, checkpointed every
 * minute of telemetry as the pipeline does. At 1 h and 5 h: the tracker checkpoint's JSON, the
 * drift state as JSON (what adding it to that checkpoint would have cost, every minute), the
 * drift state's bytes as one binary image, and the drift part as stored (server/tracking/
 * drift-chunks.ts: header and chunks); bytes written per minute over the hour before, and the
 * time a drift part takes (image, hashing). Twice: the harness plant's structure (na = nb = 1) and
 * na = nb = 2 (the same data, a larger drift state).
 */
import { LoopTracker } from "@/server/tracking/loop-tracker";
import { isNumeric } from "@/server/tracking/state-image";
import { FakeClock, arxStructureFor } from "../tracking/helpers";
import { testLoopConfig } from "@/tests/helpers/loop-config";
import { makeSim } from "../control/forecast-tracker-mc";
import { MemoryDriftStore } from "../tracking/drift-checkpoint-helpers";

const END_S = 5 * 3600;
const kB = (n: number) => `${(n / 1000).toFixed(1)} kB`;

/** The drift state's JSON (typed arrays as arrays) and its numbers' bytes as a binary image. */
function driftSizes(tr: LoopTracker): { json: number; binary: number } {
  const image = tr.drift!.checkpoint(null).base;
  let binary = 0;
  const json = JSON.stringify(image, (_k, v: unknown) => {
    if (isNumeric(v)) {
      binary += v.byteLength;
      return Array.from(v);
    }
    return v;
  }).length;
  return { json, binary };
}

/** `orders`: the tracker's na, nb (default the harness plant's own structure). */
function measure(orders?: { na: number; nb: number }): void {
  const sim = makeSim("linear-radius", 9100);
  const c = sim.config;
  const clock = new FakeClock();
  const t0 = clock.t;
  const structure = { ...arxStructureFor(c.plant, 5), ...orders };
  const tr = new LoopTracker(testLoopConfig({ id: 1, tag: c.tag, telemetryPeriodS: 5, controllerPeriodS: 5, estimationPeriodS: 5, controller: c.controller, ...structure }), { clock });
  const store = new MemoryDriftStore();
  let nextMinute = t0 + 60_000;
  let mainBytes = 0;
  let hourStart = { drift: 0, main: 0, saves: 0 };
  let ms = 0;
  let slowest = 0;
  console.log(`drift checkpoint, ${JSON.stringify(structure)}, a checkpoint every minute of telemetry:`);
  while (sim.simTimeS <= END_S) {
    const s = sim.step();
    if (!s) continue;
    clock.t = t0 + s.simTimeS * 1000;
    tr.push([{ t: clock.t, sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode }], clock.t);
    if (clock.t < nextMinute) continue;
    nextMinute += 60_000;
    mainBytes += JSON.stringify(tr.checkpoint()).length;
    const started = performance.now();
    store.save(tr);
    const took = performance.now() - started;
    ms += took;
    slowest = Math.max(slowest, took);
    const hour = Math.round(s.simTimeS / 60);
    if (hour !== 60 && hour !== 300) continue;
    // a new base for the sizes, then the store's next save takes its own
    const main = JSON.stringify(tr.checkpoint()).length;
    const sizes = driftSizes(tr);
    const minutes = store.saves - hourStart.saves;
    console.log(
      `  at ${hour / 60} h: tracker checkpoint ${kB(main)}; drift state as JSON ${kB(sizes.json)}, as binary ${kB(sizes.binary)}, as stored ${kB(store.size)} (${store.chunks.size} chunks); ` +
        `written per minute over the hour before: tracker checkpoint ${kB((mainBytes - hourStart.main) / minutes)}, drift part ${kB((store.bytesWritten - hourStart.drift) / minutes)} ` +
        `(JSON in the checkpoint instead: ${kB(sizes.json)}); drift part ${(ms / store.saves).toFixed(2)} ms on average, slowest ${slowest.toFixed(1)} ms`,
    );
    hourStart = { drift: store.bytesWritten, main: mainBytes, saves: store.saves };
  }
  console.log(`  over ${(END_S / 3600).toFixed(0)} h: ${store.saves} drift parts, ${kB(store.bytesWritten)} written, ${kB(store.bytesWritten / store.saves)} per minute`);
}

measure();
measure({ na: 2, nb: 2 });
