"use client";
/**
 * The console's form controls in one place: a labelled field (label, control, hint, error) and
 * the filter row above a table. One look for every form; the control keeps its own props
 * (react-hook-form's register, data-testid), the field only adds the label and the wiring that
 * lets a screen reader read the hint and the error with it.
 */
import {
  cloneElement,
  useCallback,
  useId,
  useState,
  type ReactElement,
  type ReactNode,
} from "react";

/** A text input or select in a form panel (panels are `bg-surface`, so the control is a step darker). */
export const INPUT_CLASS = "rounded border border-line bg-ground px-2 py-1 text-sm";
/** A control in a filter row on the page ground. */
export const FILTER_CLASS = "rounded border border-line bg-surface px-2 py-1 text-sm";
/** The primary button of a form. */
export const SUBMIT_CLASS =
  "rounded bg-accent px-3 py-1 font-semibold text-accent-ink disabled:opacity-60";

/** A react-hook-form field error, a message, or nothing. */
export type FieldErrorLike = { message?: unknown } | string | null | undefined | false;

export function errorMessage(e: FieldErrorLike): string | null {
  if (!e) return null;
  if (typeof e === "string") return e;
  return e.message == null || e.message === "" ? null : String(e.message);
}

/**
 * The server's refusal of a form: `attempt(send)` clears the last message, runs `send` and keeps
 * the message of what it throws. The form's values stay as typed.
 */
export function useServerError(): {
  error: string | null;
  attempt: (send: () => Promise<void>) => Promise<void>;
} {
  const [error, setError] = useState<string | null>(null);
  const attempt = useCallback(async (send: () => Promise<void>) => {
    setError(null);
    try {
      await send();
    } catch (x) {
      setError(x instanceof Error ? x.message : String(x));
    }
  }, []);
  return { error, attempt };
}

/** Where a form shows the server's refusal (announced when it appears). */
export function FormAlert({
  error,
  className = "w-full",
  testId,
}: {
  error: string | null;
  className?: string;
  testId?: string;
}) {
  return error ? (
    <p role="alert" className={`text-sm text-urgent ${className}`} data-testid={testId}>
      {error}
    </p>
  ) : null;
}

interface ControlProps {
  id?: string;
  "aria-describedby"?: string;
  "aria-invalid"?: boolean;
}

/**
 * Label above, control, hint, error. `children` is the one control (input, select, textarea);
 * it gets an id (its own if it has one), `aria-describedby` for the hint and error and
 * `aria-invalid` while the error shows.
 */
export function Field({
  label,
  hint,
  error,
  className = "",
  children,
}: {
  label: ReactNode;
  hint?: ReactNode;
  error?: FieldErrorLike;
  className?: string;
  children: ReactElement<ControlProps>;
}) {
  const auto = useId();
  const id = children.props.id ?? `${auto}-c`;
  const msg = errorMessage(error);
  const described =
    [hint ? `${auto}-h` : null, msg ? `${auto}-e` : null].filter(Boolean).join(" ") || undefined;
  return (
    <div className={`flex flex-col gap-0.5 text-sm ${className}`}>
      <label htmlFor={id}>{label}</label>
      {cloneElement(children, {
        id,
        "aria-describedby": described,
        "aria-invalid": msg ? true : undefined,
      })}
      {hint && (
        <span id={`${auto}-h`} className="text-xs text-muted">
          {hint}
        </span>
      )}
      {msg && (
        <span id={`${auto}-e`} className="text-xs text-urgent">
          {msg}
        </span>
      )}
    </div>
  );
}

/** A checkbox with its words to the right. */
export function CheckField({
  label,
  className = "",
  children,
}: {
  label: ReactNode;
  className?: string;
  children: ReactElement;
}) {
  return (
    <label className={`flex items-center gap-2 text-sm ${className}`}>
      {children} {label}
    </label>
  );
}

/** The row of filters above a table; wraps on narrow screens. */
export function FilterRow({ label, children }: { label: string; children: ReactNode }) {
  return (
    <div role="group" aria-label={label} className="flex flex-wrap items-end gap-3">
      {children}
    </div>
  );
}

function FilterLabel({ label, children }: { label: string; children: ReactNode }) {
  return (
    <label className="flex flex-col text-xs text-muted">
      {label}
      {children}
    </label>
  );
}

export type FilterOption = string | { value: string; label: string };

/** What every filter control takes: its label and a controlled string value. */
interface FilterProps {
  label: string;
  value: string;
  onChange: (v: string) => void;
}

/** A select whose empty value means "no filter" (worded `all` unless told otherwise). */
export function FilterSelect({
  label,
  value,
  onChange,
  options,
  all = "all",
}: FilterProps & { options: readonly FilterOption[]; all?: string }) {
  return (
    <FilterLabel label={label}>
      <select value={value} onChange={(e) => onChange(e.target.value)} className={FILTER_CLASS}>
        <option value="">{all}</option>
        {options.map((o) => {
          const { value: v, label: l } = typeof o === "string" ? { value: o, label: o } : o;
          return (
            <option key={v} value={v}>
              {l}
            </option>
          );
        })}
      </select>
    </FilterLabel>
  );
}

/** A free-text (or date-time) filter. */
export function FilterInput({
  label,
  value,
  onChange,
  placeholder,
  type = "text",
}: FilterProps & { placeholder?: string; type?: "text" | "search" | "datetime-local" }) {
  return (
    <FilterLabel label={label}>
      <input
        type={type}
        value={value}
        onChange={(e) => onChange(e.target.value)}
        className={FILTER_CLASS}
        placeholder={placeholder}
      />
    </FilterLabel>
  );
}

/** An on/off filter. */
export function FilterCheck({
  label,
  checked,
  onChange,
}: {
  label: string;
  checked: boolean;
  onChange: (v: boolean) => void;
}) {
  return (
    <label className="flex items-center gap-1 text-sm">
      <input type="checkbox" checked={checked} onChange={(e) => onChange(e.target.checked)} />{" "}
      {label}
    </label>
  );
}
