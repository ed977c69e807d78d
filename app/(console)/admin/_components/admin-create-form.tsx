/** An admin section's create form: its fields in a bordered panel, then the submit button, a status line and the server's error. */
import type { FormEventHandler, ReactNode } from "react";
import { FormAlert, SUBMIT_CLASS } from "@/app/_components/form-field";

export function AdminCreateForm({
  onSubmit,
  submitLabel,
  submitting,
  error,
  status,
  layout = "flex flex-wrap items-end gap-3",
  submitClassName = SUBMIT_CLASS,
  alertClassName,
  children,
}: {
  onSubmit: FormEventHandler<HTMLFormElement>;
  submitLabel: string;
  submitting?: boolean;
  error: string | null;
  /** A line for the screen reader and the eye after a success (role="status"). */
  status?: string | null;
  /** The panel's layout classes (the border and padding are added). */
  layout?: string;
  submitClassName?: string;
  alertClassName?: string;
  children: ReactNode;
}) {
  return (
    <form onSubmit={onSubmit} noValidate className={`${layout} rounded-md border border-line bg-surface p-3`}>
      {children}
      <button type="submit" disabled={submitting} className={submitClassName}>
        {submitLabel}
      </button>
      {status && <p role="status" className="w-full text-sm">{status}</p>}
      <FormAlert error={error} className={alertClassName} />
    </form>
  );
}
