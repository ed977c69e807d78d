import { notFound } from "next/navigation";
import { getLoopConfig } from "@/lib/data/admin/loops";
import { pageMetadata, requirePageContext } from "@/app/(console)/_shell/page-context";
import { listStepTests } from "@/lib/step-tests/service";
import { roleAtLeast } from "@/lib/domain/types";
import { StepTestsView } from "./_components/step-tests-view";
import { LoopSubpageTitle } from "../_components/loop-subpage-title";

export const dynamic = "force-dynamic";
export const metadata = pageMetadata("Step tests");

export default async function StepTestsPage({ params, searchParams }: { params: Promise<{ loopId: string }>; searchParams: Promise<{ test?: string }> }) {
  const ctx = await requirePageContext();
  const id = Number((await params).loopId);
  if (!Number.isInteger(id) || id <= 0) notFound();
  const cfg = await getLoopConfig(ctx, id);
  if (!cfg) notFound();
  const tests = await listStepTests(ctx, id);
  const wanted = Number((await searchParams).test);
  const selected = tests.find((t) => t.id === wanted)?.id ?? tests[0]?.id ?? null;
  return (
    <div className="flex flex-col gap-4">
      <LoopSubpageTitle title="Step tests" loopId={id} tag={cfg.tag} />
      <p className="max-w-3xl text-sm text-muted">
        Upload the log of an MV bump in manual (or of set-point steps in auto). Rimguard identifies the plant from MV to PV,
        summarises it as gain, time constant and dead time, and proposes the estimation period and model structure its live
        tracker should use for this loop.
      </p>
      <StepTestsView
        loopId={id}
        canUpload={roleAtLeast(ctx.role, "engineer")}
        initial={tests}
        initialSelected={selected}
        loop={{ tag: cfg.tag, units: cfg.units, mvUnits: cfg.mvUnits ?? "%", pvLo: cfg.pvLo, pvHi: cfg.pvHi, mvLo: cfg.mvLo ?? 0, mvHi: cfg.mvHi ?? 100 }}
      />
    </div>
  );
}
