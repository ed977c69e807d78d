/** The standing caution: on every console page, the sign-in page and every exported report. Browser-safe. */
export const CAUTION_TEXT =
  "Advisory monitoring only — not a safety system. Changes to live controllers follow your site's management of change; local codes and licensed practice prevail.";

export const CAUTION_NEVER_WRITES = "Rimguard reads telemetry and never writes to a controller.";
