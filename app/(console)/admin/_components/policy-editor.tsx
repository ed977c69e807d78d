"use client";
/** The alarm levels of one scope as a form, beside what they mean for each loop in it. */
import { zodResolver } from "@hookform/resolvers/zod";
import { useState } from "react";
import { useForm } from "react-hook-form";
import { z } from "zod";
import type { PolicyOverride } from "@/lib/domain/alarms/policy";
import { query, sendJson } from "@/lib/client/fetcher";
import { fmtTime } from "@/lib/client/format";
import type { PolicyView } from "@/lib/domain/services";
import { LevelEquivalents } from "./level-equivalents";

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

export function PolicyEditor({
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
