"use client";
/**
 * Alarm levels per scope (tenant, site, loop). Tenant and site levels are period-invariant
 * (decay ratio, damping); a loop may add radius levels at its estimation period. Every level is
 * shown with what it means at each loop's period (radius and equivalent time constant). A change
 * needs a reason (and may carry a management-of-change reference); it is logged.
 */
import { zodResolver } from "@hookform/resolvers/zod";
import { useState } from "react";
import { useForm } from "react-hook-form";
import useSWR from "swr";
import { z } from "zod";
import type {
  PolicyOverride,
  PolicyScope,
} from "@/lib/domain/alarms/policy";
import type { SiteDto } from "@/lib/data/admin/sites";
import type { Role } from "@/lib/domain/types";
import { roleAtLeast } from "@/lib/domain/types";
import { fetchJson, query, sendJson } from "@/lib/client/fetcher";
import { fmt, fmtSeconds, fmtTime } from "@/lib/client/format";
import { timeConstantOfRadius } from "@/lib/client/order";
import { radiusForDecayRatio } from "@/lib/domain/assessment";
import type { LoopSummary } from "@/lib/domain/types";
import type { LoopPolicyView, PolicyView } from "@/lib/domain/services";


const optNum = (v: unknown) => (v === "" || v === null || v === undefined ? undefined : Number(v));
const formSchema = z
  .object({
    drLow: z.number().gt(0, "Above 0.").lt(1, "Below 1."),
    drHigh: z.number().gt(0).max(1, "At most 1."),
    dampLow: z.number().gt(0).lt(1).optional(),
    dampHigh: z.number().gt(0).lt(1).optional(),
    rLow: z.number().gt(0).lt(1).optional(),
    rHigh: z.number().gt(0).max(1).optional(),
    onDelayS: z.number().min(0).max(3600),
    offDelayS: z.number().min(0).max(3600),
    shelveMaxMinutes: z.number().int().min(1).max(10080),
    forecastHorizonMinutes: z.number().min(1).max(10080),
    reason: z.string().trim().min(5, "Give a change reason (at least 5 characters)."),
    mocReference: z.string().trim().max(100).optional(),
  })
  .refine((v) => v.drLow < v.drHigh, {
    path: ["drHigh"],
    message: "The high decay-ratio level must be above the low one.",
  })
  .refine((v) => (v.dampLow === undefined) === (v.dampHigh === undefined), {
    path: ["dampHigh"],
    message: "Give both damping levels or neither.",
  })
  .refine((v) => v.dampLow === undefined || v.dampHigh === undefined || v.dampHigh < v.dampLow, {
    path: ["dampHigh"],
    message: "The high damping level must be below the low one (less damping is worse).",
  })
  .refine((v) => (v.rLow === undefined) === (v.rHigh === undefined), {
    path: ["rHigh"],
    message: "Give both radius levels or neither.",
  })
  .refine((v) => v.rLow === undefined || v.rHigh === undefined || v.rLow < v.rHigh, {
    path: ["rHigh"],
    message: "The high radius level must be above the low one.",
  });
type F = z.infer<typeof formSchema>;

export function AdminPolicies({
  role,
  initialScope = "tenant",
  initialId,
}: {
  role: Role;
  initialScope?: PolicyScope;
  initialId?: number;
}) {
  const [scope, setScope] = useState<PolicyScope>(initialScope);
  const [id, setId] = useState<number | undefined>(initialId);
  const sites = useSWR("/api/admin/sites", (u: string) => fetchJson<{ sites: SiteDto[] }>(u));
  const loops = useSWR("/api/loops", (u: string) => fetchJson<unknown>(u));
  const loopList = (
    Array.isArray(loops.data)
      ? loops.data
      : ((loops.data as { loops?: unknown[] } | undefined)?.loops ?? [])
  ) as LoopSummary[];
  // Angle of each loop's dominant pole now, to show what a decay-ratio level means as a radius.
  const angles = new Map<number, number>();
  for (const l of loopList) {
    const a = l.state?.oscillation?.angle;
    if (a != null) angles.set(l.id, a);
  }
  const key =
    scope === "tenant" || id
      ? `/api/alarm-policies${query({ scope, id: scope === "tenant" ? undefined : id })}`
      : null;
  const view = useSWR(key, (u: string) => fetchJson<PolicyView>(u));
  // The editor remounts when the saved view comes back (its key carries updatedAt), so the
  // confirmation lives here, tied to the scope it was given for.
  const [saved, setSaved] = useState<{ key: string; msg: string } | null>(null);
  const mayEdit = scope === "loop" ? roleAtLeast(role, "engineer") : roleAtLeast(role, "admin");
  const sel = "rounded border border-line bg-ground px-2 py-1 text-sm";
  return (
    <section className="flex flex-col gap-3" aria-label="Alarm levels" data-testid="admin-policies">
      <div className="flex flex-wrap items-end gap-3">
        <label className="flex flex-col text-xs text-muted">
          Scope
          <select
            value={scope}
            onChange={(e) => {
              setScope(e.target.value as PolicyScope);
              setId(undefined);
            }}
            className={sel}
            data-testid="policy-scope"
          >
            <option value="tenant">whole tenant</option>
            <option value="site">one site</option>
            <option value="loop">one loop</option>
          </select>
        </label>
        {scope === "site" && (
          <label className="flex flex-col text-xs text-muted">
            Site
            <select
              value={id ?? ""}
              onChange={(e) => setId(Number(e.target.value) || undefined)}
              className={sel}
            >
              <option value="">choose…</option>
              {sites.data?.sites.map((s) => (
                <option key={s.id} value={s.id}>
                  {s.name}
                </option>
              ))}
            </select>
          </label>
        )}
        {scope === "loop" && (
          <label className="flex flex-col text-xs text-muted">
            Loop
            <select
              value={id ?? ""}
              onChange={(e) => setId(Number(e.target.value) || undefined)}
              className={sel}
            >
              <option value="">choose…</option>
              {loopList.map((l) => (
                <option key={l.id} value={l.id}>
                  {l.tag}
                </option>
              ))}
            </select>
          </label>
        )}
      </div>
      {view.error && <p className="text-sm text-urgent">{(view.error as Error).message}</p>}
      {view.data && (
        <PolicyEditor
          key={`${view.data.scope}-${view.data.id}-${view.data.updatedAt}`}
          view={view.data}
          mayEdit={mayEdit}
          savedMsg={saved && saved.key === key ? saved.msg : null}
          onSaved={(msg) => {
            if (key) setSaved({ key, msg });
            void view.mutate();
          }}
          angles={angles}
        />
      )}
    </section>
  );
}

function PolicyEditor({
  view,
  mayEdit,
  savedMsg,
  onSaved,
  angles,
}: {
  view: PolicyView;
  mayEdit: boolean;
  savedMsg: string | null;
  onSaved: (msg: string) => void;
  angles: Map<number, number>;
}) {
  const e = view.effective;
  const [msg, setMsg] = useState<string | null>(savedMsg);
  const [err, setErr] = useState<string | null>(null);
  const {
    register,
    handleSubmit,
    reset,
    formState: { errors, isSubmitting },
  } = useForm<F>({
    resolver: zodResolver(formSchema) as never,
    defaultValues: {
      drLow: e.decayRatio.low,
      drHigh: e.decayRatio.high,
      dampLow: e.minDamping?.low,
      dampHigh: e.minDamping?.high,
      rLow: e.radius?.low,
      rHigh: e.radius?.high,
      onDelayS: e.onDelayS,
      offDelayS: e.offDelayS,
      shelveMaxMinutes: e.shelveMaxMinutes,
      forecastHorizonMinutes: e.forecastHorizonMinutes,
      reason: "",
      mocReference: "",
    },
  });
  const submit = handleSubmit(async (v) => {
    setErr(null);
    setMsg(null);
    const settings: PolicyOverride = {
      decayRatio: { low: v.drLow, high: v.drHigh },
      minDamping:
        v.dampLow !== undefined && v.dampHigh !== undefined
          ? { low: v.dampLow, high: v.dampHigh }
          : null,
      onDelayS: v.onDelayS,
      offDelayS: v.offDelayS,
      shelveMaxMinutes: v.shelveMaxMinutes,
      forecastHorizonMinutes: v.forecastHorizonMinutes,
      ...(view.scope === "loop"
        ? {
            radius:
              v.rLow !== undefined && v.rHigh !== undefined ? { low: v.rLow, high: v.rHigh } : null,
          }
        : {}),
    };
    try {
      await sendJson(
        `/api/alarm-policies${query({ scope: view.scope, id: view.scope === "tenant" ? undefined : view.id })}`,
        "PUT",
        {
          settings,
          reason: v.reason,
          mocReference: v.mocReference || null,
        },
      );
      const done = "Saved. The new levels apply from now on.";
      setMsg(done);
      reset({ ...v, reason: "", mocReference: "" });
      onSaved(done);
    } catch (x) {
      setErr(x instanceof Error ? x.message : String(x));
    }
  });
  const inp = "num w-28 rounded border border-line bg-ground px-2 py-1";
  const n = (name: keyof F, label: string, hint?: string) => (
    <label className="flex flex-col gap-0.5 text-sm">
      {label}
      <input
        type="number"
        step="any"
        disabled={!mayEdit}
        {...register(name, { setValueAs: optNum })}
        className={inp}
        data-testid={`policy-${name}`}
      />
      {hint && <span className="text-xs text-muted">{hint}</span>}
      {errors[name] && <span className="text-xs text-urgent">{String(errors[name]?.message)}</span>}
    </label>
  );
  return (
    <div className="grid gap-4 lg:grid-cols-[minmax(0,26rem)_minmax(0,1fr)]">
      <form
        onSubmit={submit}
        noValidate
        className="flex flex-col gap-3 rounded-md border border-line bg-surface p-3"
      >
        <p className="text-xs text-muted">
          {view.settings
            ? `This scope sets its own levels (last changed ${fmtTime(view.updatedAt)}).`
            : "This scope inherits every level; saving gives it its own."}
        </p>
        <fieldset className="grid grid-cols-2 gap-3">
          <legend className="mb-1 text-sm font-semibold">
            Decay ratio of the dominant oscillation
          </legend>
          {n("drLow", "low-priority level", "0.25 is quarter-amplitude decay")}
          {n("drHigh", "high-priority level", "1 = on the unit circle")}
        </fieldset>
        <fieldset className="grid grid-cols-2 gap-3">
          <legend className="mb-1 text-sm font-semibold">Minimum damping ζ (optional)</legend>
          {n("dampLow", "low-priority below")}
          {n("dampHigh", "high-priority below")}
        </fieldset>
        {view.scope === "loop" && (
          <fieldset className="grid grid-cols-2 gap-3">
            <legend className="mb-1 text-sm font-semibold">
              Spectral radius (this loop&apos;s period only, optional)
            </legend>
            {n("rLow", "low-priority above")}
            {n("rHigh", "high-priority above")}
          </fieldset>
        )}
        <fieldset className="grid grid-cols-2 gap-3">
          <legend className="mb-1 text-sm font-semibold">Timing</legend>
          {n("onDelayS", "on-delay, s")}
          {n("offDelayS", "off-delay, s")}
          {n("shelveMaxMinutes", "longest shelve, min")}
          {n("forecastHorizonMinutes", "rim forecast horizon, min")}
        </fieldset>
        <p role="note" className="rounded border border-line bg-raised p-2 text-xs text-muted">
          Alarm levels are advisory: Rimguard is not a safety system and never writes to a
          controller. Changing a level follows your site&apos;s management of change; local codes
          and licensed practice prevail.
        </p>
        {mayEdit ? (
          <>
            <label className="flex flex-col gap-0.5 text-sm">
              Change reason (required, logged)
              <input
                {...register("reason")}
                className="rounded border border-line bg-ground px-2 py-1"
                data-testid="policy-reason"
              />
              {errors.reason && (
                <span className="text-xs text-urgent">{errors.reason.message}</span>
              )}
            </label>
            <label className="flex flex-col gap-0.5 text-sm">
              Management-of-change reference (optional)
              <input
                {...register("mocReference")}
                className="rounded border border-line bg-ground px-2 py-1"
              />
            </label>
            {err && (
              <p role="alert" className="text-sm text-urgent">
                {err}
              </p>
            )}
            {msg && (
              <p role="status" className="text-sm">
                {msg}
              </p>
            )}
            <button
              type="submit"
              disabled={isSubmitting}
              className="self-start rounded bg-accent px-3 py-1 font-semibold text-accent-ink disabled:opacity-60"
              data-testid="policy-save"
            >
              {isSubmitting ? "Saving…" : "Save levels"}
            </button>
          </>
        ) : (
          <p className="text-sm text-muted">Your role may read these levels but not change them.</p>
        )}
      </form>
      <LevelEquivalents loops={view.loops} angles={angles} />
    </div>
  );
}

function LevelEquivalents({
  loops,
  angles,
}: {
  loops: LoopPolicyView[];
  angles: Map<number, number>;
}) {
  if (loops.length === 0) return <p className="text-sm text-muted">No loops in this scope.</p>;
  return (
    <div className="overflow-x-auto rounded-md border border-line bg-surface p-3">
      <h3 className="mb-1 font-semibold">What the levels mean for each loop</h3>
      <p className="mb-2 text-xs text-muted">
        Radius and time constant depend on the loop&apos;s estimation period T and on the period of
        its current dominant oscillation; a radius r at period T decays like a time constant τ = −T
        / ln r. Where the current dominant mode does not oscillate, radius and τ stay empty.
      </p>
      <table className="w-full text-xs" data-testid="policy-equivalents">
        <thead>
          <tr className="border-b border-line text-left text-muted">
            <th className="py-1 pr-2 font-normal">loop</th>
            <th className="py-1 pr-2 font-normal">T</th>
            <th className="py-1 pr-2 font-normal">level</th>
            <th className="py-1 pr-2 text-right font-normal">decay ratio</th>
            <th className="py-1 pr-2 text-right font-normal">ζ</th>
            <th className="py-1 pr-2 text-right font-normal">radius</th>
            <th className="py-1 text-right font-normal">τ</th>
          </tr>
        </thead>
        <tbody>
          {loops.slice(0, 200).flatMap((l) =>
            l.equivalents.map((q, i) => {
              // Where the service has no oscillation period, use the dominant pole's angle now:
              // DR = r^(2π/θ)  =>  r = DR^(θ/2π) (docs/domain.md §1).
              const theta = angles.get(l.loopId);
              const r =
                q.radius ??
                (q.decayRatio != null && theta != null
                  ? radiusForDecayRatio(q.decayRatio, theta)
                  : null);
              const tau =
                q.timeConstantS ??
                (r != null ? timeConstantOfRadius(r, l.estimationPeriodS) : null);
              return (
                <tr key={`${l.loopId}-${i}`} className="border-b border-line/40">
                  <td className="py-0.5 pr-2 font-mono">{i === 0 ? l.tag : ""}</td>
                  <td className="num py-0.5 pr-2">
                    {i === 0 ? fmtSeconds(l.estimationPeriodS) : ""}
                  </td>
                  <td className="py-0.5 pr-2">
                    {q.priority} · {q.source}
                  </td>
                  <td className="num py-0.5 pr-2 text-right font-mono">{fmt(q.decayRatio, 3)}</td>
                  <td className="num py-0.5 pr-2 text-right font-mono">{fmt(q.zeta, 3)}</td>
                  <td className="num py-0.5 pr-2 text-right font-mono">{fmt(r, 4)}</td>
                  <td className="num py-0.5 text-right font-mono">{fmtSeconds(tau)}</td>
                </tr>
              );
            }),
          )}
        </tbody>
      </table>
      {loops.length > 200 && (
        <p className="mt-1 text-xs text-muted">First 200 of {loops.length} loops shown.</p>
      )}
    </div>
  );
}
