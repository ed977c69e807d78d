"use client";
/**
 * In-page dialogs for actions that need words from the person: `FormDialog` is the shell (a
 * modal <dialog>: labelled by its title, the rest of the page inert, Tab kept inside, Escape or
 * Cancel leaves, focus goes back to what opened it); `ReasonDialog` is the common case, a
 * required change reason (and optionally a name) sent to the server. A refusal from the server
 * is shown in the dialog and the typed words stay.
 */
import {
  useEffect,
  useId,
  useRef,
  useState,
  type FormEvent,
  type KeyboardEvent,
  type ReactNode,
} from "react";
import { z } from "zod";
import { Field, FormAlert, INPUT_CLASS, SUBMIT_CLASS, useServerError } from "./form-field";
import { useZodForm } from "@/app/_components/use-zod-form";

const FOCUSABLE =
  'a[href], button:not([disabled]), input:not([disabled]), select:not([disabled]), textarea:not([disabled]), [tabindex]:not([tabindex="-1"])';

export function FormDialog({
  title,
  lead,
  caution,
  submitLabel,
  busy,
  error,
  onSubmit,
  onClose,
  children,
  testId,
}: {
  title: string;
  /** What the action applies to, under the title. */
  lead?: ReactNode;
  /** Shown where the action changes how alarms behave. */
  caution?: ReactNode;
  submitLabel: string;
  busy: boolean;
  /** The server's refusal, if any. */
  error: string | null;
  onSubmit: (e: FormEvent<HTMLFormElement>) => void;
  /** Called once the dialog has closed (Cancel, Escape, or the owner unmounting it after success). */
  onClose: () => void;
  children: ReactNode;
  testId?: string;
}) {
  const ref = useRef<HTMLDialogElement | null>(null);
  const id = useId();
  // What had focus when the dialog opened (read during the first render, before the dialog takes focus).
  const [opener] = useState<HTMLElement | null>(() =>
    typeof document === "undefined" ? null : (document.activeElement as HTMLElement | null),
  );
  useEffect(
    () => () => {
      // Unmounted by its owner after success: no close event comes, so give focus back here.
      const a = document.activeElement;
      if (opener?.isConnected && (!a || a === document.body || !a.isConnected)) opener.focus();
    },
    [opener],
  );
  const described =
    [lead ? `${id}-l` : null, caution ? `${id}-c` : null].filter(Boolean).join(" ") || undefined;

  const keepTabInside = (e: KeyboardEvent<HTMLDialogElement>) => {
    if (e.key !== "Tab" || !ref.current) return;
    const all = [...ref.current.querySelectorAll<HTMLElement>(FOCUSABLE)];
    const first = all[0];
    const last = all[all.length - 1];
    if (!first || !last) return;
    if (e.shiftKey && document.activeElement === first) {
      e.preventDefault();
      last.focus();
    } else if (!e.shiftKey && document.activeElement === last) {
      e.preventDefault();
      first.focus();
    }
  };

  return (
    <dialog
      ref={(el) => {
        ref.current = el;
        if (el && !el.open) {
          el.showModal();
          (
            el.querySelector<HTMLElement>("[data-autofocus]") ??
            el.querySelector<HTMLElement>("input, select, textarea")
          )?.focus();
        }
      }}
      onCancel={(e) => {
        // Escape while the request is out would hide its answer; wait for it.
        if (busy) e.preventDefault();
      }}
      onClose={() => {
        if (opener?.isConnected) opener.focus();
        onClose();
      }}
      onKeyDown={keepTabInside}
      aria-labelledby={`${id}-t`}
      aria-describedby={described}
      className="m-auto w-[min(32rem,92vw)] rounded-md border border-line bg-surface p-4 text-ink backdrop:bg-black/50"
      data-testid={testId}
    >
      <form onSubmit={onSubmit} className="flex flex-col gap-3" noValidate aria-busy={busy}>
        <h2 id={`${id}-t`} className="text-lg font-semibold">
          {title}
        </h2>
        {lead && (
          <p id={`${id}-l`} className="text-sm text-muted">
            {lead}
          </p>
        )}
        {children}
        {caution && (
          <p
            id={`${id}-c`}
            role="note"
            className="border-l-2 border-high pl-2 text-xs text-muted"
            data-testid="dialog-caution"
          >
            {caution}
          </p>
        )}
        <FormAlert error={error} className="" testId="dialog-error" />
        <div className="flex justify-end gap-2">
          <button
            type="button"
            onClick={() => ref.current?.close()}
            disabled={busy}
            className="rounded border border-line px-3 py-1 disabled:opacity-60"
          >
            Cancel
          </button>
          <button
            type="submit"
            disabled={busy}
            className={SUBMIT_CLASS}
            data-testid="action-submit"
          >
            {busy ? "Sending…" : submitLabel}
          </button>
        </div>
      </form>
    </dialog>
  );
}

/** The server's limits for a change reason (lib/admin/route-helpers.ts `reasonSchema`). */
const reasonField = z
  .string()
  .trim()
  .min(3, "Give a reason (at least 3 characters).")
  .max(500, "At most 500 characters.");

export interface ReasonDialogProps {
  title: string;
  lead?: ReactNode;
  caution?: ReactNode;
  submitLabel: string;
  /** Ask for a name first (e.g. a new operator area); the server's limits are 2 to 120 characters. */
  nameLabel?: string;
  /** Sends the change; a thrown error is shown in the dialog, which stays open. */
  onConfirm: (values: { reason: string; name: string }) => Promise<unknown>;
  /** After success: the owner closes the dialog (unmounts it) and refreshes. */
  onDone: () => void;
  /** Cancel or Escape. */
  onClose: () => void;
}

export function ReasonDialog({
  title,
  lead,
  caution,
  submitLabel,
  nameLabel,
  onConfirm,
  onDone,
  onClose,
}: ReasonDialogProps) {
  const { error: serverError, attempt } = useServerError();
  const schema = z.object({
    name: nameLabel
      ? z
          .string()
          .trim()
          .min(2, "Give a name (at least 2 characters).")
          .max(120, "At most 120 characters.")
      : z.string(),
    reason: reasonField,
  });
  const { register, handleSubmit, formState: { errors, isSubmitting } } = useZodForm(schema, { name: "", reason: "" });
  const submit = handleSubmit((v) =>
    attempt(async () => {
      await onConfirm({ reason: v.reason.trim(), name: v.name.trim() });
      onDone();
    }),
  );
  return (
    <FormDialog
      title={title}
      lead={lead}
      caution={caution}
      submitLabel={submitLabel}
      busy={isSubmitting}
      error={serverError}
      onSubmit={(e) => void submit(e)}
      onClose={onClose}
      testId="reason-dialog"
    >
      {nameLabel && (
        <Field label={nameLabel} error={errors.name}>
          <input
            {...register("name")}
            className={INPUT_CLASS}
            data-autofocus
            data-testid="dialog-name"
          />
        </Field>
      )}
      <Field label="Change reason (kept in the change log)" error={errors.reason}>
        <textarea
          {...register("reason")}
          rows={2}
          className={INPUT_CLASS}
          data-autofocus={nameLabel ? undefined : true}
          data-testid="reason-input"
        />
      </Field>
    </FormDialog>
  );
}
