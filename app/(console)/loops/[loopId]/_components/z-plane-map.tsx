"use client";
/**
 * The z-plane map (docs/visual-language.md): the unit circle is the strongest line; constant-ζ spirals and
 * constant-ωn·T arcs are faint and labelled (from lib/control's loci, z = e^{sT}); model-based
 * closed-loop poles are bold ×, data-only poles thin +, zeros small rings; a 95 % confidence
 * ellipse around each pole that carries a covariance; a fading trail of earlier positions; the
 * band between the warning and alarm radii lightly tinted.
 */
import { memo, type ReactElement } from "react";
import { dampingLocus, naturalFrequencyLocus } from "@/lib/control/zplane";
import type { Complex } from "@/lib/control/types";
import type { PoleBrief, PoleDto } from "@/lib/domain/types";

/** A pole to draw: a live summary's (place only) or a full state's (with its covariance for the ellipse). */
export type MapPole = PoleBrief & { cov?: PoleDto["cov"] };

const ZETAS = [0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9];
const WNT = [0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 1.0];
/** sqrt of the χ²(2) 95 % quantile, 5.991 (standard table value): scales a 1σ ellipse to 95 %. */
const CHI2_95 = Math.sqrt(5.991);
/**
 * Widest 95 % ellipse drawn, as a semi-axis in z units. A wider one says only "this pole is poorly
 * determined" and would cover the map; such a pole gets a dashed ring instead (its ± is in the
 * analysis panel's pole list).
 */
export const MAX_ELLIPSE_Z = 0.5;

export interface ZPlaneMapProps {
  modelPoles: readonly MapPole[];
  dataPoles?: readonly MapPole[];
  dataPolesKind?: "closed-loop" | "disturbance-response";
  zeros?: Complex[];
  /** Earlier model-pole sets, oldest first (the fading trail). */
  trail?: Complex[][];
  warnRadius?: number | null;
  alarmRadius?: number | null;
  size?: number;
  /** Small map for tiles: fewer loci, no labels. */
  compact?: boolean;
  /** Data are stale: draw poles grey. */
  stale?: boolean;
  title?: string;
}

type Loci = { zeta: { zeta: number; pts: Complex[] }[]; wn: { wnT: number; pts: Complex[] }[] };
const lociCache = new Map<boolean, Loci>();
/** The loci depend on `compact` alone: computed once per page, shared by every map. */
function lociFor(compact: boolean): Loci {
  let l = lociCache.get(compact);
  if (!l) {
    const zetas = compact ? [0.2, 0.5, 0.8] : ZETAS.slice(1);
    const wnts = compact ? [0.25, 0.5, 0.75] : WNT;
    l = {
      zeta: zetas.map((z) => ({ zeta: z, pts: dampingLocus(z, compact ? 24 : 64) })),
      wn: wnts.map((w) => ({ wnT: w, pts: naturalFrequencyLocus(w * Math.PI, compact ? 12 : 32) })),
    };
    lociCache.set(compact, l);
  }
  return l;
}

/**
 * Background layers (grid, loci, band, circle) by size, compact and rounded levels: one element
 * built once and reused by every map with the same key (a tile mounting while the wall scrolls
 * builds no path strings). Bounded; cleared when it grows past the limit.
 */
const backgroundCache = new Map<string, ReactElement>();
const BACKGROUND_CACHE_MAX = 2000;

function polyline(points: Complex[], s: (c: Complex) => [number, number], mirror = false): string {
  let d = "";
  points.forEach((p, i) => {
    const [x, y] = s(mirror ? { re: p.re, im: -p.im } : p);
    d += `${i ? "L" : "M"}${x.toFixed(2)} ${y.toFixed(2)}`;
  });
  return d;
}

/** Ellipse parameters of a 2x2 covariance [xx, xy, yy]: semi-axes (1σ) and rotation in radians. */
export function ellipseOf(
  cov: [number, number, number],
): { a: number; b: number; angle: number } | null {
  const [xx, xy, yy] = cov;
  if (![xx, xy, yy].every(Number.isFinite) || xx < 0 || yy < 0) return null;
  const tr = xx + yy;
  const det = xx * yy - xy * xy;
  const disc = Math.sqrt(Math.max(0, (tr * tr) / 4 - det));
  const l1 = tr / 2 + disc;
  const l2 = Math.max(0, tr / 2 - disc);
  const angle = 0.5 * Math.atan2(2 * xy, xx - yy);
  return { a: Math.sqrt(l1), b: Math.sqrt(l2), angle };
}

function ZPlaneMapInner({
  modelPoles,
  dataPoles = [],
  dataPolesKind = "disturbance-response",
  zeros = [],
  trail = [],
  warnRadius,
  alarmRadius,
  size = 360,
  compact = false,
  stale = false,
  title,
}: ZPlaneMapProps) {
  const R = 1.22;
  const half = size / 2;
  const k = half / R;
  const s = (c: Complex): [number, number] => [half + c.re * k, half - c.im * k];

  const loci = lociFor(compact);

  const poleInk = stale ? "var(--rg-suppressed)" : "var(--rg-ink)";
  const arm = compact ? 3.5 : 6;
  const described =
    title ??
    `z-plane: ${modelPoles.length} model-based pole(s) ${modelPoles.map((p) => `${p.re.toFixed(3)}${p.im >= 0 ? "+" : "-"}${Math.abs(p.im).toFixed(3)}j`).join(", ")}; ${dataPoles.length} data-only pole(s); ${zeros.length} zero(s)`;

  // The grid, loci, labels, band and circle change only with size and levels: memoised so a
  // live update re-renders the poles alone (React skips an identical element).
  // Levels rounded to 1/500 (under a pixel on a tile): small moves of the dominant angle do not redraw the grid.
  const wr = warnRadius == null ? null : Math.round(warnRadius * 500) / 500;
  const ar = alarmRadius == null ? null : Math.round(alarmRadius * 500) / 500;
  const bgKey = `${size}|${compact ? 1 : 0}|${wr}|${ar}`;
  let background = backgroundCache.get(bgKey);
  if (!background) {
    background = (
      <>
        {/* warning -> alarm band, just inside the circle */}
        {wr != null && ar != null && ar > wr && (
          <path
            d={`M${half - ar * k} ${half} a${ar * k} ${ar * k} 0 1 0 ${2 * ar * k} 0 a${ar * k} ${ar * k} 0 1 0 ${-2 * ar * k} 0 Z M${half - wr * k} ${half} a${wr * k} ${wr * k} 0 1 1 ${2 * wr * k} 0 a${wr * k} ${wr * k} 0 1 1 ${-2 * wr * k} 0 Z`}
            fill="var(--rg-high)"
            fillRule="evenodd"
            opacity="0.08"
          />
        )}
        {/* axes */}
        <line
          x1={s({ re: -R, im: 0 })[0]}
          y1={half}
          x2={s({ re: R, im: 0 })[0]}
          y2={half}
          stroke="var(--rg-line)"
          strokeWidth="1"
        />
        <line
          x1={half}
          y1={s({ re: 0, im: R })[1]}
          x2={half}
          y2={s({ re: 0, im: -R })[1]}
          stroke="var(--rg-line)"
          strokeWidth="1"
        />
        {/* constant damping spirals and constant natural-frequency arcs */}
        <g stroke="var(--rg-line)" strokeWidth="0.8" fill="none" opacity="0.9">
          {loci.zeta.map((l) => (
            <g key={`z${l.zeta}`}>
              <path d={polyline(l.pts, s)} />
              <path d={polyline(l.pts, s, true)} />
            </g>
          ))}
          {loci.wn.map((l) => (
            <g key={`w${l.wnT}`}>
              <path d={polyline(l.pts, s)} strokeDasharray="2 2" />
              <path d={polyline(l.pts, s, true)} strokeDasharray="2 2" />
            </g>
          ))}
        </g>
        {!compact && (
          <g fontSize="9" fill="var(--rg-muted)" fontFamily="var(--font-mono)">
            {loci.wn.map((l) => {
              const p = l.pts[0];
              if (!p) return null;
              const [x, y] = s({ re: p.re * 1.07, im: p.im * 1.07 });
              return (
                <text key={`tw${l.wnT}`} x={x} y={y} textAnchor="middle" dominantBaseline="middle">
                  {l.wnT === 1 ? "π/T" : `${l.wnT.toFixed(1)}π/T`}
                </text>
              );
            })}
            {loci.zeta
              .filter((l) => [0.1, 0.3, 0.5, 0.7].includes(l.zeta))
              .map((l) => {
                // labels fan out along one ray (arg z = 0.55π) so they neither crowd nor overlap
                const p = l.pts[Math.round(0.55 * (l.pts.length - 1))];
                if (!p) return null;
                const [x, y] = s(p);
                return (
                  <text key={`tz${l.zeta}`} x={x - 3} y={y - 2} textAnchor="end">
                    ζ{l.zeta.toFixed(1)}
                  </text>
                );
              })}
          </g>
        )}
        {/* the unit circle: the strongest line */}
        <circle
          cx={half}
          cy={half}
          r={k}
          fill="none"
          stroke="var(--rg-ink)"
          strokeWidth={compact ? 1.4 : 2}
        />
      </>
    );
    if (backgroundCache.size >= BACKGROUND_CACHE_MAX) backgroundCache.clear();
    backgroundCache.set(bgKey, background);
  }
  // Two stacked SVGs: the static grid below (an element shared by every map with the same key,
  // so React never touches it after the mount), the poles on top. No compositor layer of its
  // own: with a layer per tile the wall spent ~9 ms of every frame layerizing (bench trace).
  return (
    <div style={{ position: "relative", width: size, height: size, flex: "none" }}>
      <svg
        width={size}
        height={size}
        viewBox={`0 0 ${size} ${size}`}
        aria-hidden="true"
        style={{ position: "absolute", inset: 0 }}
      >
        {background}
      </svg>
      <svg
        width={size}
        height={size}
        viewBox={`0 0 ${size} ${size}`}
        role="img"
        aria-label={described}
        data-testid="z-plane"
        style={{ position: "absolute", inset: 0 }}
      >
        <title>{described}</title>
        {/* trail: older positions fainter */}
        {trail.map((set, i) => {
          const opacity = ((i + 1) / (trail.length + 1)) * 0.5;
          return (
            <g key={`t${i}`} opacity={opacity} fill={poleInk}>
              {set.map((p, j) => {
                const [x, y] = s(p);
                return <circle key={j} cx={x} cy={y} r={compact ? 1 : 1.6} />;
              })}
            </g>
          );
        })}
        {/* confidence ellipses */}
        {!compact &&
          [...modelPoles, ...dataPoles].map((p, i) => {
            if (!p.cov) return null;
            const e = ellipseOf(p.cov);
            if (!e || !(e.a > 0)) return null;
            const [x, y] = s(p);
            if (e.a * CHI2_95 > MAX_ELLIPSE_Z) {
              return (
                <circle
                  key={`e${i}`}
                  cx={x}
                  cy={y}
                  r={9}
                  fill="none"
                  stroke="var(--rg-accent)"
                  strokeWidth="0.8"
                  strokeDasharray="2 2"
                  opacity="0.8"
                  data-kind="uncertain-pole"
                >
                  <title>poorly determined: 95 % ellipse wider than {MAX_ELLIPSE_Z} in z</title>
                </circle>
              );
            }
            return (
              <ellipse
                key={`e${i}`}
                cx={x}
                cy={y}
                rx={Math.min(half, e.a * CHI2_95 * k)}
                ry={Math.max(0.5, Math.min(half, e.b * CHI2_95 * k))}
                transform={`rotate(${(-e.angle * 180) / Math.PI} ${x} ${y})`}
                fill="none"
                stroke="var(--rg-accent)"
                strokeWidth="0.8"
                opacity="0.7"
              />
            );
          })}
        {/* zeros: small rings */}
        {zeros.map((z, i) => {
          const [x, y] = s(z);
          return (
            <circle
              key={`o${i}`}
              cx={x}
              cy={y}
              r={compact ? 2.5 : 4}
              fill="none"
              stroke={poleInk}
              strokeWidth="1.2"
              data-kind="zero"
            />
          );
        })}
        {/* data-only poles: thin + */}
        {dataPoles.map((p, i) => {
          const [x, y] = s(p);
          return (
            <path
              key={`d${i}`}
              d={`M${x - arm} ${y}H${x + arm}M${x} ${y - arm}V${y + arm}`}
              stroke={poleInk}
              strokeWidth="1"
              data-kind={`data-pole-${dataPolesKind}`}
            />
          );
        })}
        {/* model-based poles: bold × (red only outside the circle) */}
        {modelPoles.map((p, i) => {
          const [x, y] = s(p);
          const out = Math.hypot(p.re, p.im) >= 1;
          return (
            <path
              key={`m${i}`}
              d={`M${x - arm} ${y - arm}L${x + arm} ${y + arm}M${x - arm} ${y + arm}L${x + arm} ${y - arm}`}
              stroke={out && !stale ? "var(--rg-urgent)" : poleInk}
              strokeWidth={compact ? 2 : 2.6}
              strokeLinecap="round"
              data-kind="model-pole"
            />
          );
        })}
        {!compact && (
          <g fontSize="10" fill="var(--rg-muted)" fontFamily="var(--font-mono)">
            <text x={s({ re: 1, im: 0 })[0] + 3} y={half + 11}>
              1
            </text>
            <text x={s({ re: -1, im: 0 })[0] - 12} y={half + 11}>
              −1
            </text>
            <text x={half + 3} y={s({ re: 0, im: 1 })[1] - 3}>
              j
            </text>
          </g>
        )}
      </svg>
    </div>
  );
}

export const ZPlaneMap = memo(ZPlaneMapInner);

/** The legend under a full-size map: shapes explained in words. */
export function ZPlaneLegend({
  dataPolesKind,
}: {
  dataPolesKind: "closed-loop" | "disturbance-response";
}) {
  return (
    <ul className="flex flex-wrap gap-x-4 gap-y-1 text-xs text-muted">
      <li>
        <span className="font-mono font-bold text-ink">×</span> closed-loop pole from the model
      </li>
      <li>
        <span className="font-mono text-ink">+</span>{" "}
        {dataPolesKind === "closed-loop"
          ? "closed-loop pole from data alone"
          : "disturbance-response pole (data alone, constant SP)"}
      </li>
      <li>
        <span className="font-mono text-ink">○</span> zero
      </li>
      <li>
        <span style={{ color: "var(--rg-accent)" }}>⬭</span> 95 % confidence
      </li>
      <li>
        <span style={{ color: "var(--rg-accent)" }}>◌</span> poorly determined (ellipse wider than{" "}
        {MAX_ELLIPSE_Z} in z)
      </li>
      <li>dotted trail: earlier positions</li>
      <li>tinted ring: between warning and alarm radius</li>
    </ul>
  );
}
