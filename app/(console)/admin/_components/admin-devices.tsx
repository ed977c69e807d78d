"use client";
/** Device credentials: create (the secret is shown once), list, revoke. */
import { useState } from "react";
import useSWR from "swr";
import { z } from "zod";
import type { DeviceDto } from "@/lib/data/admin/devices";
import type { SiteDto } from "@/lib/data/admin/sites";
import { fetchJson, sendJson } from "@/lib/client/fetcher";
import { fmtTime } from "@/lib/client/format";
import { Field, INPUT_CLASS, useServerError } from "@/app/_components/form-field";
import { ReasonDialog } from "@/app/_components/reason-dialog";
import { IdOptions } from "@/app/_components/id-options";
import { useZodForm } from "@/app/_components/use-zod-form";
import { AdminTable } from "./admin-table";
import { AdminCreateForm } from "./admin-create-form";

const form = z.object({ name: z.string().trim().min(2, "Name the device (at least 2 characters)."), siteId: z.number().int().positive().nullable() });

export function AdminDevices() {
  const { data, error, mutate } = useSWR("/api/admin/devices", (u: string) => fetchJson<{ devices: DeviceDto[] }>(u));
  const sites = useSWR("/api/admin/sites", (u: string) => fetchJson<{ sites: SiteDto[] }>(u));
  const [created, setCreated] = useState<(DeviceDto & { secret: string }) | null>(null);
  const { error: err, attempt } = useServerError();
  const [revoking, setRevoking] = useState<DeviceDto | null>(null);
  const { register, handleSubmit, reset, formState: { errors, isSubmitting } } = useZodForm(form, { name: "", siteId: null });
  const create = handleSubmit((v) =>
    attempt(async () => {
      const r = await sendJson<{ device: DeviceDto & { secret: string } }>("/api/admin/devices", "POST", v);
      setCreated(r.device);
      reset({ name: "", siteId: v.siteId });
      void mutate();
    }),
  );
  return (
    <section className="flex flex-col gap-3" aria-label="Device credentials" data-testid="admin-devices">
      <AdminCreateForm onSubmit={create} submitting={isSubmitting} submitLabel="Create credential" error={err}>
        <Field label="Device name" error={errors.name}>
          <input {...register("name")} className={`${INPUT_CLASS} w-64`} />
        </Field>
        <Field label="May publish for">
          <select {...register("siteId", { setValueAs: (v) => (v === "" || v == null ? null : Number(v)) })} className={INPUT_CLASS}>
            <option value="">every site of the tenant</option>
            <IdOptions rows={sites.data?.sites} label="name" />
          </select>
        </Field>
      </AdminCreateForm>
      {created && (
        <div role="status" className="rounded-md border-2 border-accent bg-surface p-3 text-sm" data-testid="device-secret">
          <p className="font-semibold">Copy the secret now: it is shown only this once and cannot be recovered.</p>
          <dl className="mt-2 grid grid-cols-[auto_1fr] gap-x-3 font-mono">
            <dt className="text-muted">MQTT username</dt>
            <dd>{created.keyId}</dd>
            <dt className="text-muted">MQTT password</dt>
            <dd className="break-all">{created.secret}</dd>
            <dt className="text-muted">client id</dt>
            <dd>{created.clientId}</dd>
          </dl>
          <button type="button" onClick={() => setCreated(null)} className="mt-2 rounded border border-line px-2 py-0.5">
            I have stored it
          </button>
        </div>
      )}
      <AdminTable error={error} columns={["Name", "Key id", "Client id", "Created", "Last seen", "Status"]}>
        {data?.devices.map((d) => (
          <tr key={d.id} className={`border-b border-line/50 ${d.revokedAt ? "text-muted" : ""}`}>
            <td className="px-2 py-1">{d.name}</td>
            <td className="px-2 py-1 font-mono">{d.keyId}</td>
            <td className="px-2 py-1 font-mono">{d.clientId}</td>
            <td className="num px-2 py-1">{fmtTime(d.createdAt)}</td>
            <td className="num px-2 py-1">{d.lastSeenAt ? fmtTime(d.lastSeenAt) : "never"}</td>
            <td className="px-2 py-1">
              {d.revokedAt ? (
                `revoked ${fmtTime(d.revokedAt)}`
              ) : (
                <button type="button" onClick={() => setRevoking(d)} className="rounded border border-line px-2 py-0.5 text-xs">
                  Revoke
                </button>
              )}
            </td>
          </tr>
        ))}
      </AdminTable>
      {revoking && (
        <ReasonDialog
          title="Revoke device credential"
          lead={
            <>
              {revoking.name} · <span className="font-mono">{revoking.keyId}</span>
            </>
          }
          caution="The broker drops this gateway and refuses it from now on: the loops it feeds go stale and raise no alarms from fresh data until another credential publishes for them. A revoked credential cannot be restored; make a new one."
          submitLabel="Revoke"
          onConfirm={({ reason }) => sendJson(`/api/admin/devices/${revoking.id}`, "DELETE", { reason })}
          onDone={() => {
            setRevoking(null);
            void mutate();
          }}
          onClose={() => setRevoking(null)}
        />
      )}
    </section>
  );
}
