"use client";
/**
 * The caller's own report e-mails: add (handover per shift for a site or one of its areas; worst
 * loops or fleet health weekly, for every site, a site or an area) and remove.
 */
import { useRouter } from "next/navigation";
import { useState } from "react";
import { sendJson } from "@/lib/client/fetcher";
import type { SubscriptionDto } from "@/lib/reports/delivery";
import { AreaSelect } from "./area-select";
import { IdOptions } from "@/app/_components/id-options";

const NAMES: Record<string, string> = { handover: "Shift handover", "worst-loops": "Worst loops", "fleet-health": "Fleet health" };

export interface SubscriptionSite {
  id: number;
  name: string;
  areas: { id: number; name: string }[];
}

export function SubscriptionsForm({ subscriptions, sites }: { subscriptions: SubscriptionDto[]; sites: SubscriptionSite[] }) {
  const router = useRouter();
  const [report, setReport] = useState("handover");
  const [siteId, setSiteId] = useState(sites[0] ? String(sites[0].id) : "");
  const [areaId, setAreaId] = useState("");
  const areas = sites.find((s) => String(s.id) === siteId)?.areas ?? [];
  const [fail, setFail] = useState<string | null>(null);
  const field = "rounded border border-line bg-ground px-1 py-0.5 text-sm";
  async function run(fn: () => Promise<unknown>) {
    setFail(null);
    try {
      await fn();
      router.refresh();
    } catch (err) {
      setFail((err as Error).message);
    }
  }
  return (
    <div className="flex flex-col gap-3">
      <ul className="divide-y divide-line rounded-md border border-line bg-surface" aria-label="Your report e-mails">
        {subscriptions.length === 0 && <li className="p-3 text-sm text-muted">You receive no report by e-mail.</li>}
        {subscriptions.map((s) => (
          <li key={s.id} className="flex items-center justify-between gap-2 p-3 text-sm">
            <span>
              {NAMES[s.report]} · {s.cadence === "shift" ? "after every shift" : "weekly (Monday, previous week)"}
              {s.siteName ? ` · ${s.siteName}` : " · all your sites"}
              {s.siteName ? (s.areaName ? ` · area ${s.areaName}` : " · every area") : ""}
            </span>
            <button type="button" className="rounded border border-line px-2 py-0.5" onClick={() => run(() => sendJson(`/api/reports/subscriptions/${s.id}`, "DELETE"))}>
              Stop
            </button>
          </li>
        ))}
      </ul>
      <form
        className="flex flex-wrap items-end gap-3 text-sm"
        onSubmit={(e) => {
          e.preventDefault();
          void run(() =>
            sendJson("/api/reports/subscriptions", "POST", {
              report,
              cadence: report === "handover" ? "shift" : "weekly",
              ...(siteId ? { siteId: Number(siteId) } : {}),
              ...(siteId && areaId ? { areaId: Number(areaId) } : {}),
            }),
          );
        }}
      >
        <label className="flex flex-col text-muted">
          Report
          <select value={report} onChange={(e) => setReport(e.target.value)} className={field}>
            {Object.entries(NAMES).map(([k, v]) => (
              <option key={k} value={k}>
                {v}
              </option>
            ))}
          </select>
        </label>
        <label className="flex flex-col text-muted">
          Site
          <select
            value={siteId}
            onChange={(e) => {
              setSiteId(e.target.value);
              setAreaId("");
            }}
            className={field}
          >
            {report !== "handover" && <option value="">all your sites</option>}
            <IdOptions rows={sites} label="name" />
          </select>
        </label>
        <label className="flex flex-col text-muted">
          Area
          <AreaSelect value={areaId} onChange={setAreaId} areas={areas} emptyLabel={siteId ? "every area of the site" : "—"} className={field} disabled={!siteId} />
        </label>
        <button type="submit" className="rounded border border-line px-3 py-1">
          Send it to me {report === "handover" ? "after every shift" : "weekly"}
        </button>
        {fail && (
          <span role="alert" className="text-urgent">
            {fail}
          </span>
        )}
      </form>
    </div>
  );
}
