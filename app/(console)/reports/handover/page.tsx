import Link from "next/link";
import { notFound } from "next/navigation";
import { listSites } from "@/lib/data/admin/sites";
import { pageMetadata, requirePageContext } from "@/app/(console)/_shell/page-context";
import { handoverDocument, formatLocal } from "@/lib/reports/document";
import { buildHandover, resolveShift, siteShiftInfo } from "@/lib/reports/handover";
import { readTime } from "@/lib/reports/params";
import { nextShift, shiftAt } from "@/lib/reports/shifts";
import { roleAtLeast } from "@/lib/domain/types";
import { ConfirmHandover, ShiftNoteForm } from "../_components/handover-actions";
import { ReportDocView } from "../_components/report-doc-view";
import { ReportHeading } from "../_components/report-heading";
import { ReportTabs } from "../_components/report-tabs";

export const dynamic = "force-dynamic";
export const metadata = pageMetadata("Shift handover");

export default async function HandoverPage({ searchParams }: { searchParams: Promise<{ site?: string; area?: string; shift?: string }> }) {
  const ctx = await requirePageContext();
  const sp = await searchParams;
  const sites = await listSites(ctx);
  const chosen = sites.find((s) => String(s.id) === sp.site) ?? sites[0];
  if (!chosen) {
    return (
      <div className="flex flex-col gap-3">
        <ReportTabs active="/reports/handover" />
        <p className="text-muted">This tenant has no site yet.</p>
      </div>
    );
  }
  if (sp.site && String(chosen.id) !== sp.site) notFound();
  const area = sp.area ? chosen.areas.find((a) => String(a.id) === sp.area) : undefined;
  if (sp.area && !area) notFound();
  const site = await siteShiftInfo(ctx, chosen.id, area?.id ?? null);
  const areaQ = area ? `&area=${area.id}` : "";
  const now = readTime();
  const asked = sp.shift === "current" ? "current" : sp.shift ? Date.parse(sp.shift) : undefined;
  if (typeof asked === "number" && !Number.isFinite(asked)) notFound();
  let shift;
  try {
    shift = resolveShift(site, asked, now);
  } catch {
    notFound();
  }
  const h = await buildHandover(ctx, site, shift, now);
  const doc = handoverDocument(h);
  const prev = shiftAt(shift.start - 1, site.timeZone, site.shiftStarts);
  const next = nextShift(shift, site.timeZone, site.shiftStarts);
  const href = (s: string) => `/reports/handover?site=${site.siteId}${areaQ}&shift=${encodeURIComponent(s)}`;
  const shiftIso = new Date(shift.start).toISOString();
  const download = (format: string) => `/api/reports/handover?siteId=${site.siteId}${area ? `&areaId=${area.id}` : ""}&shift=${h.inProgress ? "current" : encodeURIComponent(shiftIso)}&format=${format}`;
  return (
    <div className="flex flex-col gap-4">
      <ReportTabs active="/reports/handover" />
      <ReportHeading title={doc.title} period={doc.period} periodTestId="handover-period">
        <div className="flex flex-wrap items-center gap-2 text-sm">
          {sites.length > 1 &&
            sites.map((s) => (
              <Link key={s.id} href={`/reports/handover?site=${s.id}`} aria-current={s.id === site.siteId ? "true" : undefined} className={s.id === site.siteId ? "font-medium underline" : "text-muted"}>
                {s.name}
              </Link>
            ))}
        </div>
      </ReportHeading>
      {chosen.areas.length > 0 && (
        <nav aria-label="Areas" className="flex flex-wrap items-center gap-3 text-sm">
          <Link href={`/reports/handover?site=${site.siteId}`} aria-current={!area ? "true" : undefined} className={!area ? "font-medium underline" : "text-muted"}>
            whole site
          </Link>
          {chosen.areas.map((a) => (
            <Link key={a.id} href={`/reports/handover?site=${site.siteId}&area=${a.id}`} aria-current={a.id === area?.id ? "true" : undefined} className={a.id === area?.id ? "font-medium underline" : "text-muted"}>
              {a.name}
            </Link>
          ))}
        </nav>
      )}
      <nav aria-label="Shifts" className="flex flex-wrap items-center gap-3 text-sm">
        <Link href={href(new Date(prev.start).toISOString())}>← previous shift ({formatLocal(prev.start, site.timeZone)})</Link>
        {next.end <= now && <Link href={href(new Date(next.start).toISOString())}>next shift ({formatLocal(next.start, site.timeZone)}) →</Link>}
        <Link href={`/reports/handover?site=${site.siteId}${areaQ}`}>last ended shift</Link>
        <Link href={href("current")}>running shift (in progress)</Link>
        <span className="ml-auto flex gap-2">
          <a href={download("csv")} download className="rounded border border-line px-2 py-0.5">
            Download CSV
          </a>
          <a href={download("pdf")} download className="rounded border border-line px-2 py-0.5">
            Download PDF
          </a>
        </span>
      </nav>
      {h.inProgress ? (
        <p className="text-sm text-muted">This shift has not ended: a preview as of {formatLocal(h.asOf, site.timeZone)}. The handover is final from the end of the shift.</p>
      ) : (
        roleAtLeast(ctx.role, "operator") && <ConfirmHandover siteId={site.siteId} shift={shiftIso} confirmed={h.confirmations.some((c) => c.userId === ctx.userId)} />
      )}
      {roleAtLeast(ctx.role, "operator") && <ShiftNoteForm siteId={site.siteId} areas={chosen.areas.map((a) => ({ id: a.id, name: a.name }))} />}
      <ReportDocView doc={doc} />
    </div>
  );
}
