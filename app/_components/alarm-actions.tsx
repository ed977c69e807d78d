"use client";
/**
 * Operator actions on one alarm: acknowledge (comment; required for urgent), shelve (minutes +
 * reason), unshelve. The server checks the role again; viewers never get these controls.
 */
import { zodResolver } from "@hookform/resolvers/zod";
import { useId, useRef, useState } from "react";
import { useForm } from "react-hook-form";
import { z } from "zod";
import type { AlarmDto, AlarmPriority, AlarmState } from "@/lib/types";
import { sendJson } from "@/lib/client/fetcher";

type Kind = "acknowledge" | "shelve" | "unshelve";

const ackSchema = (priority: AlarmPriority) =>
  z.object({
    comment:
      priority === "urgent"
        ? z.string().trim().min(3, "An urgent alarm needs a comment (at least 3 characters).").max(1000)
        : z.string().trim().max(1000),
  });
const shelveSchema = z.object({
  minutes: z.coerce.number().int("Whole minutes.").min(1, "At least 1 minute.").max(7 * 24 * 60, "At most 7 days."),
  reason: z.string().trim().min(3, "Give a reason (at least 3 characters).").max(1000),
});

export function canAcknowledge(state: AlarmState): boolean {
  return state === "unacknowledged" || state === "rtn-unacknowledged";
}

export function AlarmActions({
  alarm,
  onDone,
  compact = false,
}: {
  alarm: Pick<AlarmDto, "id" | "priority" | "state" | "loopTag" | "message">;
  onDone?: () => void;
  compact?: boolean;
}) {
  const [open, setOpen] = useState<Kind | null>(null);
  const btn = `rounded border border-line bg-raised px-2 ${compact ? "py-0.5 text-xs" : "py-1 text-sm"} hover:border-accent`;
  return (
    <span className="inline-flex flex-wrap gap-1">
      {canAcknowledge(alarm.state) && (
        <button type="button" className={btn} onClick={() => setOpen("acknowledge")} data-testid="ack-button">
          Acknowledge
        </button>
      )}
      {(alarm.state === "unacknowledged" || alarm.state === "acknowledged" || alarm.state === "rtn-unacknowledged") && (
        <button type="button" className={btn} onClick={() => setOpen("shelve")}>
          Shelve
        </button>
      )}
      {alarm.state === "shelved" && (
        <button type="button" className={btn} onClick={() => setOpen("unshelve")}>
          Unshelve
        </button>
      )}
      {open && (
        <ActionDialog
          kind={open}
          alarm={alarm}
          onClose={() => setOpen(null)}
          onDone={() => {
            setOpen(null);
            onDone?.();
          }}
        />
      )}
    </span>
  );
}

function ActionDialog({
  kind,
  alarm,
  onClose,
  onDone,
}: {
  kind: Kind;
  alarm: Pick<AlarmDto, "id" | "priority" | "state" | "loopTag" | "message">;
  onClose: () => void;
  onDone: () => void;
}) {
  const ref = useRef<HTMLDialogElement>(null);
  const id = useId();
  const [serverError, setServerError] = useState<string | null>(null);
  const schema = kind === "shelve" ? shelveSchema : ackSchema(alarm.priority);
  const {
    register,
    handleSubmit,
    formState: { errors, isSubmitting },
  } = useForm<{ comment?: string; minutes?: number; reason?: string }>({
    // One dialog serves three schemas; the resolver is typed per schema, the form by the union of fields.
    resolver: zodResolver(schema as never) as never,
    defaultValues: kind === "shelve" ? { minutes: 60, reason: "" } : { comment: "" },
  });
  const title = kind === "acknowledge" ? "Acknowledge alarm" : kind === "shelve" ? "Shelve alarm" : "Unshelve alarm";
  const submit = handleSubmit(async (v) => {
    setServerError(null);
    try {
      const body = kind === "shelve" ? { minutes: Number(v.minutes), reason: v.reason } : { comment: v.comment ?? "" };
      await sendJson(`/api/alarms/${alarm.id}/${kind}`, "POST", body);
      onDone();
    } catch (e) {
      setServerError(e instanceof Error ? e.message : String(e));
    }
  });
  return (
    <dialog
      ref={(el) => {
        ref.current = el;
        if (el && !el.open) el.showModal();
      }}
      onClose={onClose}
      aria-labelledby={`${id}-t`}
      className="m-auto w-[min(32rem,92vw)] rounded-md border border-line bg-surface p-4 text-ink backdrop:bg-black/50"
    >
      <form onSubmit={submit} className="flex flex-col gap-3" noValidate>
        <h2 id={`${id}-t`} className="text-lg font-semibold">
          {title}
        </h2>
        <p className="text-sm text-muted">
          <span className="font-mono text-ink">{alarm.loopTag}</span> — {alarm.message}
        </p>
        {kind !== "shelve" && (
          <label className="flex flex-col gap-1 text-sm">
            Comment {alarm.priority === "urgent" && kind === "acknowledge" ? "(required for an urgent alarm)" : "(optional)"}
            <textarea {...register("comment")} rows={3} className="rounded border border-line bg-ground p-2" autoFocus data-testid="ack-comment" />
            {errors.comment && <span className="text-urgent">{String(errors.comment.message)}</span>}
          </label>
        )}
        {kind === "shelve" && (
          <>
            <label className="flex flex-col gap-1 text-sm">
              Minutes (the policy may allow less)
              <input type="number" {...register("minutes")} className="num w-32 rounded border border-line bg-ground p-2" />
              {errors.minutes && <span className="text-urgent">{String(errors.minutes.message)}</span>}
            </label>
            <label className="flex flex-col gap-1 text-sm">
              Reason
              <textarea {...register("reason")} rows={2} className="rounded border border-line bg-ground p-2" autoFocus />
              {errors.reason && <span className="text-urgent">{String(errors.reason.message)}</span>}
            </label>
          </>
        )}
        {serverError && (
          <p role="alert" className="text-sm text-urgent">
            {serverError}
          </p>
        )}
        <div className="flex justify-end gap-2">
          <button type="button" onClick={() => ref.current?.close()} className="rounded border border-line px-3 py-1">
            Cancel
          </button>
          <button type="submit" disabled={isSubmitting} className="rounded bg-accent px-3 py-1 font-semibold text-accent-ink disabled:opacity-60" data-testid="action-submit">
            {isSubmitting ? "Sending…" : title.split(" ")[0]}
          </button>
        </div>
      </form>
    </dialog>
  );
}
