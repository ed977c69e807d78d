"use client";
/**
 * Create or edit a loop (engineer): identity, ranges, the live controller's tuning as documented
 * by the site, model structure and estimation period, and a change reason (logged with an
 * optional management-of-change reference). Validated in the browser and again on the server
 * with the same schema.
 */
import { zodResolver } from "@hookform/resolvers/zod";
import { useRouter } from "next/navigation";
import { useState } from "react";
import { useForm, type FieldErrors, type UseFormRegister } from "react-hook-form";
import useSWR from "swr";
import { createLoopSchema, NEW_LOOP_DEFAULTS, type CreateLoopInput, type LoopFields } from "@/lib/admin/loop-schema";
import type { SiteDto } from "@/lib/data/admin/sites";
import { LOOP_KINDS } from "@/lib/domain/types";
import { fetchJson, sendJson } from "@/lib/client/fetcher";
import { IdOptions } from "@/app/_components/id-options";

type Form = CreateLoopInput;
const numOrNull = (v: unknown) => (v === "" || v === null || v === undefined ? null : Number(v));
const num = (v: unknown) => (v === "" || v === null || v === undefined ? NaN : Number(v));

function Field({ name, label, register, errors, type = "text", nullable = false, hint, children }: {
  name: keyof Form;
  label: string;
  register: UseFormRegister<Form>;
  errors: FieldErrors<Form>;
  type?: "text" | "number";
  nullable?: boolean;
  hint?: string;
  children?: React.ReactNode;
}) {
  const err = errors[name];
  const id = `f-${String(name)}`;
  return (
    <label htmlFor={id} className="flex flex-col gap-0.5 text-sm">
      <span>{label}</span>
      {children ?? (
        <input
          id={id}
          type={type}
          step="any"
          aria-invalid={!!err}
          {...register(name, type === "number" ? { setValueAs: nullable ? numOrNull : num } : {})}
          className="num rounded border border-line bg-ground px-2 py-1"
        />
      )}
      {hint && <span className="text-xs text-muted">{hint}</span>}
      {err && <span className="text-xs text-urgent">{String(err.message)}</span>}
    </label>
  );
}

type LoopFormProps = { initial?: LoopFields & { estimationProposedS?: number | null }; loopId?: number };

/** Waits for the sites so the site and area selects show the loop's own values from the start. */
export function LoopForm(props: LoopFormProps) {
  const sites = useSWR("/api/admin/sites", (u: string) => fetchJson<{ sites: SiteDto[] }>(u));
  if (sites.error) return <p role="alert" className="text-urgent">Could not load the sites: {(sites.error as Error).message}</p>;
  if (!sites.data) return <p className="text-muted">Loading…</p>;
  return <LoopFormInner {...props} sites={sites.data.sites} />;
}

function LoopFormInner({ initial, loopId, sites }: LoopFormProps & { sites: SiteDto[] }) {
  const router = useRouter();
  const [serverError, setServerError] = useState<string | null>(null);
  // The schema is strict: keep only the form's own fields (the proposal is shown, not edited).
  const { estimationProposedS: _proposed, ...own } = initial ?? {};
  const defaults = { ...NEW_LOOP_DEFAULTS, siteId: 0, ...own, reason: "", mocReference: "" } as Form;
  const {
    register,
    handleSubmit,
    watch,
    formState: { errors, isSubmitting, dirtyFields },
  } = useForm<Form>({ resolver: zodResolver(createLoopSchema) as never, defaultValues: defaults, mode: "onBlur" });
  const siteId = Number(watch("siteId"));
  const areas = sites.find((s) => s.id === siteId)?.areas ?? [];
  const sel = "rounded border border-line bg-ground px-2 py-1";

  const submit = handleSubmit(async (v) => {
    setServerError(null);
    try {
      if (loopId) {
        const patch: Record<string, unknown> = { reason: v.reason, mocReference: v.mocReference || null };
        for (const k of Object.keys(dirtyFields) as (keyof Form)[]) if (k !== "reason" && k !== "mocReference") patch[k] = v[k];
        await sendJson(`/api/loops/${loopId}`, "PATCH", patch);
        router.push(`/loops/${loopId}`);
      } else {
        const r = await sendJson<{ loop: { id: number } }>("/api/loops", "POST", { ...v, mocReference: v.mocReference || null });
        router.push(`/loops/${r.loop.id}`);
      }
      router.refresh();
    } catch (e) {
      setServerError(e instanceof Error ? e.message : String(e));
    }
  });

  const p = { register, errors };
  return (
    <form onSubmit={submit} noValidate className="flex max-w-5xl flex-col gap-5" data-testid="loop-form">
      <fieldset className="grid gap-3 rounded-md border border-line bg-surface p-3 md:grid-cols-3">
        <legend className="px-1 font-semibold">Identity</legend>
        <Field name="siteId" label="Site" {...p}>
          <select id="f-siteId" {...register("siteId", { setValueAs: (v) => Number(v) })} className={sel}>
            <option value={0}>choose…</option>
            <IdOptions rows={sites} label="name" />
          </select>
        </Field>
        <Field name="areaId" label="Operator area" {...p}>
          <select id="f-areaId" {...register("areaId", { setValueAs: numOrNull })} className={sel}>
            <option value="">none</option>
            <IdOptions rows={areas} label="name" />
          </select>
        </Field>
        <Field name="tag" label="Tag" {...p} hint="As the plant writes it, e.g. FIC-101" />
        <Field name="description" label="Description" {...p} />
        <Field name="kind" label="Kind" {...p}>
          <select id="f-kind" {...register("kind")} className={sel}>
            {LOOP_KINDS.map((k) => (
              <option key={k}>{k}</option>
            ))}
          </select>
        </Field>
        <Field name="criticality" label="Criticality (1-5)" type="number" hint="Weight in the worst-loops score; 3 = normal" {...p} />
        <Field name="enabled" label="Tracked" {...p}>
          <input id="f-enabled" type="checkbox" {...register("enabled")} className="h-5 w-5" />
        </Field>
      </fieldset>

      <fieldset className="grid gap-3 rounded-md border border-line bg-surface p-3 md:grid-cols-3">
        <legend className="px-1 font-semibold">Ranges</legend>
        <Field name="units" label="PV units" {...p} />
        <Field name="pvLo" label="PV range low" type="number" {...p} />
        <Field name="pvHi" label="PV range high" type="number" {...p} />
        <Field name="mvUnits" label="MV units" {...p} />
        <Field name="mvLo" label="MV range low" type="number" {...p} />
        <Field name="mvHi" label="MV range high" type="number" {...p} />
      </fieldset>

      <fieldset className="grid gap-3 rounded-md border border-line bg-surface p-3 md:grid-cols-3">
        <legend className="px-1 font-semibold">Controller tuning (as configured in the live controller)</legend>
        <p className="text-xs text-muted md:col-span-3" role="note">
          These values document the controller so the closed-loop poles can be formed. Saving them here does not change the controller; any change to a live
          controller follows the site&apos;s management of change and is made by authorised personnel.
        </p>
        <Field name="action" label="Action" {...p}>
          <select id="f-action" {...register("action")} className={sel}>
            <option value="reverse">reverse (MV falls when PV rises)</option>
            <option value="direct">direct</option>
          </select>
        </Field>
        <Field name="form" label="Algorithm form" {...p}>
          <select id="f-form" {...register("form")} className={sel}>
            <option>ideal</option>
            <option>parallel</option>
            <option>series</option>
          </select>
        </Field>
        <Field name="gainKind" label="Gain given as" {...p}>
          <select id="f-gainKind" {...register("gainKind")} className={sel}>
            <option value="gain">gain (%/%)</option>
            <option value="pb">proportional band (%)</option>
          </select>
        </Field>
        <Field name="gainValue" label="Gain or band" type="number" {...p} />
        <Field name="tiValue" label="Integral (blank = none)" type="number" nullable {...p} />
        <Field name="tiUnits" label="Integral units" {...p}>
          <select id="f-tiUnits" {...register("tiUnits")} className={sel}>
            <option value="s">s</option>
            <option value="min">min</option>
            <option value="repeats-per-min">repeats/min</option>
          </select>
        </Field>
        <Field name="tdValue" label="Derivative time" type="number" {...p} />
        <Field name="tdUnits" label="Derivative units" {...p}>
          <select id="f-tdUnits" {...register("tdUnits")} className={sel}>
            <option value="s">s</option>
            <option value="min">min</option>
          </select>
        </Field>
        <Field name="tfS" label="Derivative filter Tf, s (blank = none)" type="number" nullable {...p} />
        <Field name="controllerPeriodS" label="Controller execution period, s" type="number" {...p} />
        <Field name="telemetryPeriodS" label="Telemetry period, s" type="number" {...p} />
      </fieldset>

      <fieldset className="grid gap-3 rounded-md border border-line bg-surface p-3 md:grid-cols-3">
        <legend className="px-1 font-semibold">Model structure and estimation period</legend>
        <Field name="na" label="A order (na)" type="number" {...p} />
        <Field name="nb" label="B coefficients (nb)" type="number" {...p} />
        <Field name="nk" label="Delay nk (estimation periods)" type="number" {...p} />
        <Field
          name="estimationPeriodS"
          label="Estimation period, s"
          type="number"
          {...p}
          hint={`Telemetry is averaged to this period so the dominant poles do not crowd at z = 1.${initial?.estimationProposedS ? ` Proposed: ${initial.estimationProposedS} s.` : ""}`}
        />
        <Field name="baselineTimeConstantS" label="Baseline closed-loop time constant, s (blank = none)" type="number" nullable {...p} />
        <Field
          name="deadTimeS"
          label="Apparent dead time, s (blank = from the latest applied step test)"
          type="number"
          nullable
          {...p}
          hint="The delay a step test shows (the transport delay plus about half of a second lag), not the transport delay alone: the routine-data finding judges tuning against it, and a transport delay alone makes a well-tuned loop on a lagged process read sluggish. Routine closed-loop data cannot tell it; without it (and without an applied step test) the Harris index stays empty."
        />
      </fieldset>

      <fieldset className="grid gap-3 rounded-md border border-line bg-surface p-3 md:grid-cols-2">
        <legend className="px-1 font-semibold">Why</legend>
        <Field name="reason" label="Change reason (required, logged)" {...p} />
        <Field name="mocReference" label="Management-of-change reference (optional)" {...p} />
      </fieldset>
      {errors.root && <p role="alert" className="text-urgent">{String(errors.root.message)}</p>}
      {serverError && (
        <p role="alert" className="text-urgent">
          {serverError}
        </p>
      )}
      <div className="flex gap-2">
        <button type="submit" disabled={isSubmitting} className="rounded bg-accent px-4 py-1.5 font-semibold text-accent-ink disabled:opacity-60" data-testid="loop-save">
          {isSubmitting ? "Saving…" : loopId ? "Save changes" : "Create loop"}
        </button>
        <button type="button" onClick={() => router.back()} className="rounded border border-line px-4 py-1.5">
          Cancel
        </button>
      </div>
    </form>
  );
}
