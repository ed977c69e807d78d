"use client";
/** On the handover page: write a shift note (operator+) and confirm having read an ended shift's handover. */
import { useRouter } from "next/navigation";
import { useState } from "react";
import { sendJson } from "@/lib/client/fetcher";
import { FormAlert, useServerError } from "@/app/_components/form-field";
import { AreaSelect } from "./area-select";

/** Send, then refresh the page's server data; busy while it runs, the server's refusal kept as typed. */
function useRefreshingAction(): { busy: boolean; error: string | null; run: (send: () => Promise<unknown>) => Promise<void> } {
  const router = useRouter();
  const [busy, setBusy] = useState(false);
  const { error, attempt } = useServerError();
  const run = async (send: () => Promise<unknown>) => {
    setBusy(true);
    await attempt(async () => {
      await send();
      router.refresh();
    });
    setBusy(false);
  };
  return { busy, error, run };
}

export function ShiftNoteForm({ siteId, areas }: { siteId: number; areas: { id: number; name: string }[] }) {
  const [text, setText] = useState("");
  const [areaId, setAreaId] = useState<string>("");
  const { busy, error, run } = useRefreshingAction();
  async function submit(e: React.FormEvent) {
    e.preventDefault();
    await run(async () => {
      await sendJson("/api/notes", "POST", { kind: "shift", siteId, ...(areaId ? { areaId: Number(areaId) } : {}), text });
      setText("");
    });
  }
  return (
    <form onSubmit={submit} className="flex flex-col gap-1 rounded-md border border-line bg-surface p-3" aria-label="Shift note">
      <label htmlFor="shift-note" className="font-semibold">
        Shift note <span className="text-sm font-normal text-muted">goes into the running shift&apos;s handover</span>
      </label>
      <textarea id="shift-note" value={text} onChange={(e) => setText(e.target.value)} rows={3} maxLength={2000} className="rounded border border-line bg-ground px-2 py-1 text-sm" />
      <div className="flex flex-wrap items-center gap-2">
        <label className="text-sm text-muted">
          Area{" "}
          <AreaSelect value={areaId} onChange={setAreaId} areas={areas} emptyLabel="whole site" className="rounded border border-line bg-ground px-1 py-0.5 text-sm" />
        </label>
        <button type="submit" disabled={busy || !text.trim()} className="rounded border border-line px-3 py-0.5 text-sm disabled:opacity-50">
          Add shift note
        </button>
        <FormAlert error={error} className="" />
      </div>
    </form>
  );
}

export function ConfirmHandover({ siteId, shift, confirmed }: { siteId: number; shift: string; confirmed: boolean }) {
  const { busy, error, run } = useRefreshingAction();
  if (confirmed) return <p className="text-sm text-muted">You have confirmed reading this handover.</p>;
  return (
    <div className="flex items-center gap-2">
      <button
        type="button"
        disabled={busy}
        className="rounded border border-line px-3 py-1 text-sm"
        onClick={() => run(() => sendJson("/api/reports/handover/confirm", "POST", { siteId, shift }))}
      >
        I have read this handover
      </button>
      <FormAlert error={error} className="" />
    </div>
  );
}
