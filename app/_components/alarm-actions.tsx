"use client";
/**
 * Operator actions on one alarm: acknowledge (comment; required for urgent), shelve (minutes +
 * reason), unshelve. The server checks the role again; viewers never get these controls.
 */
import { zodResolver } from "@hookform/resolvers/zod";
import { useState } from "react";
import { useForm } from "react-hook-form";
import { z } from "zod";
import type { AlarmDto, AlarmPriority, AlarmState } from "@/lib/domain/types";
import { sendJson } from "@/lib/client/fetcher";
import { Field, INPUT_CLASS, useServerError } from "./form-field";
import { FormDialog } from "./reason-dialog";

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
  onOpenChange,
  compact = false,
}: {
  alarm: Pick<AlarmDto, "id" | "priority" | "state" | "loopTag" | "message">;
  onDone?: () => void;
  /** Told when a dialog opens or closes (a live list keeps the alarm's row while one is open). */
  onOpenChange?: (open: boolean) => void;
  compact?: boolean;
}) {
  const [open, setOpenKind] = useState<Kind | null>(null);
  const setOpen = (kind: Kind | null) => {
    setOpenKind(kind);
    onOpenChange?.(kind !== null);
  };
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

const TITLES: Record<Kind, string> = { acknowledge: "Acknowledge alarm", shelve: "Shelve alarm", unshelve: "Unshelve alarm" };
const SUBMITS: Record<Kind, string> = { acknowledge: "Acknowledge", shelve: "Shelve", unshelve: "Unshelve" };

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
  const { error: serverError, attempt } = useServerError();
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
  const submit = handleSubmit((v) =>
    attempt(async () => {
      const body = kind === "shelve" ? { minutes: Number(v.minutes), reason: v.reason } : { comment: v.comment ?? "" };
      await sendJson(`/api/alarms/${alarm.id}/${kind}`, "POST", body);
      onDone();
    }),
  );
  return (
    <FormDialog
      title={TITLES[kind]}
      lead={
        <>
          <span className="font-mono text-ink">{alarm.loopTag}</span> — {alarm.message}
        </>
      }
      caution={kind === "shelve" ? "While shelved, this alarm neither annunciates nor notifies anyone; it returns by itself when the time is up. Shelve only as your site's alarm management procedure allows." : undefined}
      submitLabel={SUBMITS[kind]}
      busy={isSubmitting}
      error={serverError}
      onSubmit={(e) => void submit(e)}
      onClose={onClose}
      testId="alarm-action-dialog"
    >
      {kind !== "shelve" && (
        <Field label={`Comment ${alarm.priority === "urgent" && kind === "acknowledge" ? "(required for an urgent alarm)" : "(optional)"}`} error={errors.comment}>
          <textarea {...register("comment")} rows={3} className={INPUT_CLASS} data-autofocus data-testid="ack-comment" />
        </Field>
      )}
      {kind === "shelve" && (
        <>
          <Field label="Minutes (the policy may allow less)" error={errors.minutes}>
            <input type="number" {...register("minutes")} className={`num w-32 ${INPUT_CLASS}`} />
          </Field>
          <Field label="Reason" error={errors.reason}>
            <textarea {...register("reason")} rows={2} className={INPUT_CLASS} data-autofocus />
          </Field>
        </>
      )}
    </FormDialog>
  );
}
