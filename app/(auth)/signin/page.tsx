import type { Metadata } from "next";
import { redirect } from "next/navigation";
import { getContextOrNull } from "@/lib/auth/guard";
import { SignInForm } from "./sign-in-form";

export const metadata: Metadata = { title: "Sign in" };

function safeCallback(value: string | string[] | undefined): string {
  const v = Array.isArray(value) ? value[0] : value;
  // Only a path on this site (never an absolute or protocol-relative URL from the query string).
  if (!v || !v.startsWith("/") || v.startsWith("//") || v.startsWith("/\\")) return "/";
  return v.startsWith("/signin") ? "/" : v;
}

export default async function SignInPage({
  searchParams,
}: {
  searchParams: Promise<Record<string, string | string[] | undefined>>;
}) {
  const params = await searchParams;
  const callbackUrl = safeCallback(params.callbackUrl);
  if (await getContextOrNull()) redirect(callbackUrl);
  const error = Array.isArray(params.error) ? params.error[0] : params.error;
  return (
    <div className="w-full max-w-sm">
      <div className="mb-8 flex items-center gap-3">
        <RimMark />
        <div>
          <h1 className="text-2xl font-semibold tracking-tight">Rimguard</h1>
          <p className="text-sm text-muted">Loop health, read from live telemetry</p>
        </div>
      </div>
      <div className="rounded-lg border border-line bg-surface p-6 shadow-sm">
        <h2 className="mb-4 text-lg font-medium">Sign in</h2>
        <SignInForm callbackUrl={callbackUrl} initialError={error ?? null} />
      </div>
    </div>
  );
}

/** Our mark: a circle (the unit circle) with a tick just inside its rim. */
function RimMark() {
  return (
    <svg width="40" height="40" viewBox="0 0 40 40" aria-hidden="true">
      <circle cx="20" cy="20" r="16" fill="none" stroke="currentColor" strokeWidth="2.5" className="text-ink" />
      <line x1="20" y1="20" x2="31" y2="12" stroke="currentColor" strokeWidth="1.5" className="text-muted" />
      <circle cx="31" cy="12" r="2.6" fill="currentColor" className="text-accent" />
    </svg>
  );
}
