/** The standing caution, visible on every console page and on the sign-in page. */
export const CAUTION_TEXT =
  "Advisory monitoring only — not a safety system. Changes to live controllers follow your site's management of change; local codes and licensed practice prevail.";

export function CautionLine({ className = "" }: { className?: string }) {
  return (
    <p role="note" aria-label="Caution" className={`text-xs leading-snug text-muted ${className}`}>
      <span aria-hidden="true" className="mr-1.5 inline-block font-semibold text-ink">
        ⓘ
      </span>
      {CAUTION_TEXT} Rimguard reads telemetry and never writes to a controller.
    </p>
  );
}
