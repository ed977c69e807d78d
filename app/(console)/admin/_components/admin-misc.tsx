"use client";
/** Administration sections: notification rules, sites and operator areas, the demo's outbox. */
import { useState } from "react";
import useSWR from "swr";
import { z } from "zod";
import type { RuleDto } from "@/lib/data/admin/notifications";
import type { SiteDto } from "@/lib/data/admin/sites";
import { ALARM_PRIORITIES } from "@/lib/domain/types";
import { fetchJson, sendJson } from "@/lib/client/fetcher";
import { fmtTime } from "@/lib/client/format";
import { CheckField, Field, INPUT_CLASS, SUBMIT_CLASS, useServerError } from "@/app/_components/form-field";
import { ReasonDialog } from "@/app/_components/reason-dialog";
import { useZodForm } from "@/app/_components/use-zod-form";
import { AdminCreateForm } from "./admin-create-form";

const nullableInt = (v: unknown) => (v === "" || v === null || v === undefined ? null : Number(v));
const ruleForm = z.object({
  name: z.string().trim().min(2, "Name the rule."),
  areaId: z.number().int().positive().nullable(),
  recipients: z.string().trim().min(3, "At least one e-mail address."),
  minPriority: z.enum(ALARM_PRIORITIES),
  escalationMinutes: z.number().int().min(1).max(1440).nullable(),
  repeatMinutes: z.number().int().min(5, "At least 5 minutes.").max(1440).nullable(),
  enabled: z.boolean(),
  reason: z.string().trim().min(3, "Give a change reason."),
});

export function AdminRules() {
  const { data, error, mutate } = useSWR("/api/admin/notification-rules", (u: string) => fetchJson<{ rules: RuleDto[] }>(u));
  const sites = useSWR("/api/admin/sites", (u: string) => fetchJson<{ sites: SiteDto[] }>(u));
  const areas = sites.data?.sites.flatMap((s) => s.areas.map((a) => ({ ...a, site: s.name }))) ?? [];
  const { error: err, attempt } = useServerError();
  const [deleting, setDeleting] = useState<RuleDto | null>(null);
  const { register, handleSubmit, reset, formState: { errors, isSubmitting } } = useZodForm(ruleForm, { name: "", areaId: null, recipients: "", minPriority: "high", escalationMinutes: 15, repeatMinutes: 60, enabled: true, reason: "" });
  const create = handleSubmit((v) =>
    attempt(async () => {
      await sendJson("/api/admin/notification-rules", "POST", { ...v, recipients: v.recipients.split(/[\s,;]+/).filter(Boolean) });
      reset();
      void mutate();
    }),
  );
  return (
    <section className="flex flex-col gap-3" aria-label="Notification rules" data-testid="admin-rules">
      <AdminCreateForm onSubmit={create} submitting={isSubmitting} submitLabel="Add rule" error={err} layout="grid gap-3 md:grid-cols-4" submitClassName={`self-end ${SUBMIT_CLASS}`} alertClassName="md:col-span-4">
        <Field label="Rule name" error={errors.name}>
          <input {...register("name")} className={INPUT_CLASS} />
        </Field>
        <Field label="Operator area">
          <select {...register("areaId", { setValueAs: nullableInt })} className={INPUT_CLASS}>
            <option value="">every area</option>
            {areas.map((a) => (
              <option key={a.id} value={a.id}>
                {a.site} · {a.name}
              </option>
            ))}
          </select>
        </Field>
        <Field label="Recipients (e-mail addresses, comma separated)" error={errors.recipients} className="md:col-span-2">
          <input {...register("recipients")} className={INPUT_CLASS} />
        </Field>
        <Field label="From priority">
          <select {...register("minPriority")} className={INPUT_CLASS}>
            {ALARM_PRIORITIES.map((p) => (
              <option key={p} value={p}>
                {p} and above
              </option>
            ))}
          </select>
        </Field>
        <Field label="Escalate when unacknowledged after, min" error={errors.escalationMinutes}>
          <input type="number" {...register("escalationMinutes", { setValueAs: nullableInt })} className={INPUT_CLASS} />
        </Field>
        <Field label="Repeat every, min" error={errors.repeatMinutes}>
          <input type="number" {...register("repeatMinutes", { setValueAs: nullableInt })} className={INPUT_CLASS} />
        </Field>
        <CheckField label="enabled">
          <input type="checkbox" {...register("enabled")} />
        </CheckField>
        <Field label="Change reason" error={errors.reason} className="md:col-span-3">
          <input {...register("reason")} className={INPUT_CLASS} />
        </Field>
      </AdminCreateForm>
      {error && <p className="text-sm text-urgent">{(error as Error).message}</p>}
      <ul className="flex flex-col gap-1 text-sm">
        {data?.rules.length === 0 && <li className="text-muted">No rules: nobody is e-mailed about alarms.</li>}
        {data?.rules.map((r) => (
          <li key={r.id} className="flex flex-wrap items-center gap-3 rounded border border-line bg-surface px-3 py-1.5">
            <strong>{r.name}</strong>
            <span>{r.areaId ? (areas.find((a) => a.id === r.areaId)?.name ?? `area ${r.areaId}`) : "every area"}</span>
            <span>{r.minPriority} and above</span>
            <span className="text-muted">{r.recipients.join(", ")}</span>
            <span className="text-muted">
              escalate {r.escalationMinutes ? `after ${r.escalationMinutes} min` : "never"}, repeat {r.repeatMinutes ? `every ${r.repeatMinutes} min` : "never"}
            </span>
            {!r.enabled && <span className="text-suppressed">disabled</span>}
            <button type="button" onClick={() => setDeleting(r)} className="ml-auto rounded border border-line px-2 py-0.5 text-xs">
              Delete
            </button>
          </li>
        ))}
      </ul>
      {deleting && (
        <ReasonDialog
          title="Delete notification rule"
          lead={`${deleting.name}: ${deleting.minPriority} and above, to ${deleting.recipients.join(", ")}`}
          caution="Alarms this rule covered will no longer be e-mailed or escalated to its recipients. The alarms themselves still show in the console."
          submitLabel="Delete rule"
          onConfirm={({ reason }) => sendJson(`/api/admin/notification-rules/${deleting.id}`, "DELETE", { reason })}
          onDone={() => {
            setDeleting(null);
            void mutate();
          }}
          onClose={() => setDeleting(null)}
        />
      )}
    </section>
  );
}

const siteForm = z.object({ name: z.string().trim().min(2, "Name the site."), timeZone: z.string().trim().min(3, "An IANA time zone, e.g. Europe/Berlin.") });

export function AdminSites() {
  const { data, error, mutate } = useSWR("/api/admin/sites", (u: string) => fetchJson<{ sites: SiteDto[] }>(u));
  const { error: err, attempt } = useServerError();
  const [areaFor, setAreaFor] = useState<SiteDto | null>(null);
  const { register, handleSubmit, reset, formState: { errors, isSubmitting } } = useZodForm(siteForm, { name: "", timeZone: "UTC" });
  const create = handleSubmit((v) =>
    attempt(async () => {
      await sendJson("/api/admin/sites", "POST", v);
      reset();
      void mutate();
    }),
  );
  return (
    <section className="flex flex-col gap-3" aria-label="Sites and areas" data-testid="admin-sites">
      <AdminCreateForm onSubmit={create} submitting={isSubmitting} submitLabel="Add site" error={err}>
        <Field label="Site name" error={errors.name}>
          <input {...register("name")} className={INPUT_CLASS} />
        </Field>
        <Field label="Time zone" error={errors.timeZone}>
          <input {...register("timeZone")} className={INPUT_CLASS} />
        </Field>
      </AdminCreateForm>
      {error && <p className="text-sm text-urgent">{(error as Error).message}</p>}
      <ul className="flex flex-col gap-2">
        {data?.sites.map((s) => (
          <li key={s.id} className="rounded border border-line bg-surface px-3 py-2 text-sm">
            <div className="flex items-center gap-3">
              <strong>{s.name}</strong>
              <span className="font-mono text-muted">{s.slug}</span>
              <span className="text-muted">{s.timeZone}</span>
              <button type="button" onClick={() => setAreaFor(s)} className="ml-auto rounded border border-line px-2 py-0.5 text-xs">
                Add area
              </button>
            </div>
            <p className="text-muted">Operator areas: {s.areas.length ? s.areas.map((a) => a.name).join(", ") : "none"}</p>
          </li>
        ))}
      </ul>
      {areaFor && (
        <ReasonDialog
          title="Add operator area"
          lead={`At ${areaFor.name}`}
          nameLabel="Area name"
          submitLabel="Add area"
          onConfirm={({ name, reason }) => sendJson(`/api/admin/sites/${areaFor.id}/areas`, "POST", { name, reason })}
          onDone={() => {
            setAreaFor(null);
            void mutate();
          }}
          onClose={() => setAreaFor(null)}
        />
      )}
    </section>
  );
}

interface OutboxMsg {
  id: number;
  from: string;
  to: string[];
  subject: string;
  text: string;
  receivedAt: string;
}

export function AdminOutbox() {
  const { data, error } = useSWR("/api/outbox", (u: string) => fetchJson<{ sink: boolean; messages: OutboxMsg[] }>(u), { refreshInterval: 10_000 });
  const [open, setOpen] = useState<number | null>(null);
  return (
    <section className="flex flex-col gap-2" aria-label="Outbox" data-testid="admin-outbox">
      <p className="text-xs text-muted">
        {data?.sink === false ? "A real SMTP server is configured: this list stays empty." : "The local mail sink keeps every message this demo sent (nothing leaves the machine)."}
      </p>
      {error && <p className="text-sm text-urgent">{(error as Error).message}</p>}
      {data?.messages.length === 0 && <p className="text-sm text-muted">No messages yet.</p>}
      <ul className="flex flex-col gap-1 text-sm">
        {data?.messages.map((m) => (
          <li key={m.id} className="rounded border border-line bg-surface px-3 py-1.5">
            <button type="button" className="flex w-full flex-wrap gap-3 text-left" aria-expanded={open === m.id} onClick={() => setOpen(open === m.id ? null : m.id)}>
              <span className="num text-muted">{fmtTime(m.receivedAt)}</span>
              <span>{m.to.join(", ")}</span>
              <strong>{m.subject}</strong>
            </button>
            {open === m.id && <pre className="mt-2 whitespace-pre-wrap font-mono text-xs">{m.text}</pre>}
          </li>
        ))}
      </ul>
    </section>
  );
}
