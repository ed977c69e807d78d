/** The standing caution, visible on every console page and on the sign-in page. */
import { CAUTION_NEVER_WRITES, CAUTION_TEXT } from "@/lib/caution";

export { CAUTION_TEXT };

export function CautionLine({ className = "" }: { className?: string }) {
  return (
    <p role="note" aria-label="Caution" className={`text-xs leading-snug text-muted ${className}`}>
      <svg aria-hidden="true" width="12" height="12" viewBox="0 0 12 12" className="mr-1.5 inline-block align-[-1px]">
        <circle cx="6" cy="6" r="5.25" fill="none" stroke="currentColor" strokeWidth="1.2" />
        <rect x="5.4" y="5" width="1.2" height="4" fill="currentColor" />
        <rect x="5.4" y="2.8" width="1.2" height="1.2" fill="currentColor" />
      </svg>
      {CAUTION_TEXT} {CAUTION_NEVER_WRITES}
    </p>
  );
}
