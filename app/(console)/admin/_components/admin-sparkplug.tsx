"use client";
/**
 * Sparkplug B gateways: the tenant's group ids, the edge nodes and devices seen with their last
 * birth (and whether Rimguard needs a rebirth from them: it never asks, being read-only), and the
 * form that maps a device's metrics to a loop's SP, PV, MV and mode, offering only the metrics of
 * the device's last birth that fit each signal.
 */
import { useMemo, useState } from "react";
import useSWR from "swr";
import { Field, FormAlert, INPUT_CLASS, SUBMIT_CLASS, useServerError } from "@/app/_components/form-field";
import { ApiError, fetchJson, sendJson } from "@/lib/client/fetcher";
import { fmtTime } from "@/lib/client/format";
import type { LoopSummary } from "@/lib/domain/types";
import { MODE_DATATYPES, NUMERIC_DATATYPES, datatypeName, type SparkplugOverviewDto, type SparkplugSourceDto } from "@/lib/domain/sparkplug";
import { IdOptions } from "@/app/_components/id-options";
import { AdminTable } from "./admin-table";
import { AdminCreateForm } from "./admin-create-form";

const sourceKey = (s: Pick<SparkplugSourceDto, "groupId" | "edgeNode" | "device">) => `${s.groupId}/${s.edgeNode}/${s.device}`;
const CODES: Record<string, number> = Object.fromEntries(Array.from({ length: 14 }, (_, i) => [datatypeName(i + 1), i + 1]));

export function AdminSparkplug() {
  const { data, error, mutate } = useSWR("/api/admin/sparkplug", (u: string) => fetchJson<SparkplugOverviewDto>(u));
  const loops = useSWR("/api/loops", (u: string) => fetchJson<{ loops: LoopSummary[] }>(u));
  const bind = useServerError();
  const save = useServerError();
  const [groupId, setGroupId] = useState("");
  const [form, setForm] = useState({ source: "", loopId: "", sp: "", pv: "", mv: "", mode: "", reason: "" });
  const [fieldErrors, setFieldErrors] = useState<Record<string, string>>({});
  const source = data?.sources.find((s) => sourceKey(s) === form.source) ?? null;
  const fits = useMemo(() => {
    const of = (codes: readonly number[]) => (source?.metrics ?? []).filter((m) => codes.includes(CODES[m.datatype] ?? -1)).map((m) => m.name);
    return { numeric: of(NUMERIC_DATATYPES), mode: of(MODE_DATATYPES) };
  }, [source]);
  const set = (k: keyof typeof form) => (e: { target: { value: string } }) => setForm((f) => ({ ...f, [k]: e.target.value }));

  const submitBind = (e: React.FormEvent) => {
    e.preventDefault();
    void bind.attempt(async () => {
      await sendJson("/api/admin/sparkplug", "POST", { groupId: groupId.trim() });
      setGroupId("");
      void mutate();
    });
  };
  const submitMapping = (e: React.FormEvent) => {
    e.preventDefault();
    setFieldErrors({});
    if (!source) return setFieldErrors({ device: "Choose an edge node or device." });
    void save.attempt(async () => {
      try {
        await sendJson("/api/admin/sparkplug/mappings", "PUT", {
          loopId: Number(form.loopId),
          groupId: source.groupId,
          edgeNode: source.edgeNode,
          device: source.device,
          sp: form.sp,
          pv: form.pv,
          mv: form.mv,
          mode: form.mode === "" ? null : form.mode,
          ...(form.reason.trim() ? { reason: form.reason.trim() } : {}),
        });
      } catch (x) {
        if (x instanceof ApiError && x.details && typeof x.details === "object") setFieldErrors(x.details as Record<string, string>);
        throw x;
      }
      setForm((f) => ({ ...f, sp: "", pv: "", mv: "", mode: "", reason: "" }));
      void mutate();
    });
  };
  const remove = (loopId: number) =>
    void save.attempt(async () => {
      await sendJson(`/api/admin/sparkplug/mappings/${loopId}`, "DELETE", { reason: "mapping removed by an admin" });
      void mutate();
    });
  const metricSelect = (k: "sp" | "pv" | "mv" | "mode", names: string[], optional = false) => (
    <select value={form[k]} onChange={set(k)} className={INPUT_CLASS}>
      <option value="">{optional ? "none: the loop counts as in automatic" : "choose a metric"}</option>
      {names.map((n) => (
        <option key={n} value={n}>
          {n}
        </option>
      ))}
    </select>
  );

  return (
    <section className="flex flex-col gap-3" aria-label="Sparkplug B gateways" data-testid="admin-sparkplug">
      <p className="text-sm text-muted">
        Gateways that speak Sparkplug B publish under a group id. A group id belongs to one organisation: its births and data count here whichever broker carries them. Rimguard only listens; it never sends
        commands or rebirth requests, so a source marked as needing a rebirth must be restarted at the gateway.
      </p>
      <AdminCreateForm onSubmit={submitBind} submitLabel="Claim group id" error={bind.error}>
        <Field label="Group id" hint={`Yours: ${data?.groups.join(", ") || "none yet"}`}>
          <input value={groupId} onChange={(e) => setGroupId(e.target.value)} className={`${INPUT_CLASS} w-64`} />
        </Field>
      </AdminCreateForm>
      <AdminTable error={error} columns={["Group / edge node / device", "bdSeq", "Last birth", "Status", "Metrics"]}>
        {data?.sources.map((s) => (
          <tr key={sourceKey(s)} className="border-b border-line align-top">
            <td className="px-2 py-1 font-mono">{`${s.groupId} / ${s.edgeNode}${s.device ? ` / ${s.device}` : ""}`}</td>
            <td className="px-2 py-1">{s.bdSeq ?? "–"}</td>
            <td className="px-2 py-1">{fmtTime(s.bornAt)}</td>
            <td className="px-2 py-1">{s.needsRebirth ? <span className="text-urgent">needs a rebirth: {s.needsRebirth}</span> : s.deadAt ? `offline since ${fmtTime(s.deadAt)}` : "online"}</td>
            <td className="px-2 py-1">{s.metrics.length}</td>
          </tr>
        ))}
      </AdminTable>
      <form onSubmit={submitMapping} noValidate className="flex flex-wrap items-end gap-3 rounded-md border border-line bg-surface p-3" aria-label="Map metrics to a loop">
        <Field label="Edge node or device" error={fieldErrors.device}>
          <select value={form.source} onChange={set("source")} className={INPUT_CLASS}>
            <option value="">choose</option>
            {data?.sources.map((s) => (
              <option key={sourceKey(s)} value={sourceKey(s)}>
                {`${s.groupId} / ${s.edgeNode}${s.device ? ` / ${s.device}` : ""}`}
              </option>
            ))}
          </select>
        </Field>
        <Field label="Loop" error={fieldErrors.loopId}>
          <select value={form.loopId} onChange={set("loopId")} className={INPUT_CLASS}>
            <option value="">choose a loop</option>
            <IdOptions rows={loops.data?.loops} label="tag" />
          </select>
        </Field>
        <Field label="SP" error={fieldErrors.sp}>{metricSelect("sp", fits.numeric)}</Field>
        <Field label="PV" error={fieldErrors.pv}>{metricSelect("pv", fits.numeric)}</Field>
        <Field label="MV" error={fieldErrors.mv}>{metricSelect("mv", fits.numeric)}</Field>
        <Field label="Mode" hint="text auto/manual/cascade, true = auto, or 0 manual, 1 auto, 2 cascade" error={fieldErrors.mode}>
          {metricSelect("mode", fits.mode, true)}
        </Field>
        <Field label="Reason">
          <input value={form.reason} onChange={set("reason")} className={`${INPUT_CLASS} w-56`} />
        </Field>
        <button type="submit" className={SUBMIT_CLASS}>
          Save mapping
        </button>
        <FormAlert error={save.error} />
      </form>
      <AdminTable columns={["Loop", "Source", "SP / PV / MV / mode", null]}>
        {data?.mappings.map((m) => (
          <tr key={m.loopId} className="border-b border-line">
            <td className="px-2 py-1">{m.loopTag}</td>
            <td className="px-2 py-1 font-mono">{`${m.groupId} / ${m.edgeNode}${m.device ? ` / ${m.device}` : ""}`}</td>
            <td className="px-2 py-1 font-mono">{[m.sp, m.pv, m.mv, m.mode ?? "(auto)"].join(" · ")}</td>
            <td className="px-2 py-1">
              <button type="button" onClick={() => remove(m.loopId)} className="rounded border border-line px-2 py-0.5">
                Remove
              </button>
            </td>
          </tr>
        ))}
      </AdminTable>
    </section>
  );
}
