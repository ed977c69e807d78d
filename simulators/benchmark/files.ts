/**
 * A recording as a historian export for the offline assessment: header `t,sp,pv,mv[,mode][,quality]`,
 * `t` in seconds from the start or ISO 8601 with a zone, SP/PV in engineering units at a
 * precision that suits the span, MV in % of output.
 */
import type { RecordedSample } from "./recording-sim";

/** Digits after the point for values on a span: about five significant digits of the span. */
function decimalsFor(span: number): number {
  return Math.max(0, Math.min(6, 4 - Math.floor(Math.log10(Math.abs(span) || 1))));
}

function isoAt(startMs: number, offsetText: string, tS: number): string {
  // local time in the given zone: shift the UTC instant by the zone's offset and print it with that offset
  const sign = offsetText.startsWith("-") ? -1 : 1;
  const [hh, mm] = offsetText.slice(1).split(":").map(Number);
  const offsetMs = sign * ((hh ?? 0) * 60 + (mm ?? 0)) * 60_000;
  const local = new Date(startMs + tS * 1000 + offsetMs).toISOString();
  return `${local.slice(0, 23)}${offsetText}`;
}

/**
 * The CSV text. A `quality` column is written when the samples carry one; `blankBad` leaves the
 * PV cell of a bad-quality row empty, as some historians export it.
 */
export function recordingCsv(samples: RecordedSample[], config: { pvLo: number; pvHi: number }, opts: { startIso?: string; blankBad?: boolean } = {}): string {
  const d = decimalsFor(config.pvHi - config.pvLo);
  const withMode = samples.some((s) => s.mode !== undefined);
  const withQuality = samples.some((s) => s.quality !== undefined);
  const lines = [["t", "sp", "pv", "mv", ...(withMode ? ["mode"] : []), ...(withQuality ? ["quality"] : [])].join(",")];
  let time: (t: number) => string = (t) => String(Number(t.toFixed(3)));
  if (opts.startIso) {
    const m = /([+-]\d\d:\d\d|Z)$/.exec(opts.startIso);
    const zone = m?.[1] === "Z" || !m ? "+00:00" : m[1]!;
    const startMs = Date.parse(opts.startIso);
    time = (t) => isoAt(startMs, zone, t);
  }
  for (const s of samples) {
    const cells = [time(s.t), s.sp.toFixed(d), opts.blankBad && s.quality === "bad" ? "" : s.pv.toFixed(d), s.mv.toFixed(3)];
    if (withMode) cells.push(s.mode ?? "");
    if (withQuality) cells.push(s.quality ?? "good");
    lines.push(cells.join(","));
  }
  return `${lines.join("\n")}\n`;
}
