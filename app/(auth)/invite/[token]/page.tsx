import Link from "next/link";
import { describeInvitation } from "@/lib/data/admin/users";
import { getContextOrNull } from "@/lib/auth/guard";
import { AcceptAsSignedInForm, InviteForm } from "./invite-form";

export const dynamic = "force-dynamic";
export const metadata = { title: "Accept an invitation · Rimguard" };

export default async function InvitePage({ params }: { params: Promise<{ token: string }> }) {
  const { token } = await params;
  const inv = await describeInvitation(token);
  const ctx = inv?.existingAccount ? await getContextOrNull() : null;
  const signInHref = `/signin?callbackUrl=${encodeURIComponent(`/invite/${token}`)}`;
  return (
    <section className="w-full max-w-md rounded-lg border border-line bg-surface p-6" aria-labelledby="invite-title">
      <h1 id="invite-title" className="mb-3 text-xl font-semibold">
        {inv ? `Join ${inv.tenantName} as ${inv.role}` : "This link cannot be used"}
      </h1>
      {!inv ? (
        <p className="text-sm text-muted">The invitation link is unknown, already used or expired. Ask your administrator for a new one.</p>
      ) : !inv.existingAccount ? (
        <InviteForm token={token} email={inv.email} />
      ) : ctx && ctx.email.toLowerCase() === inv.email.toLowerCase() ? (
        <AcceptAsSignedInForm token={token} email={inv.email} />
      ) : (
        <div className="flex flex-col gap-3 text-sm" data-testid="invite-sign-in-first">
          <p>
            There is already a Rimguard account for <span className="font-semibold">{inv.email}</span>. Sign in with it to accept; the
            invitation adds {inv.tenantName} to that account and changes nothing else.
          </p>
          {ctx && <p className="text-muted">You are signed in as {ctx.email}, not as the invited account.</p>}
          <Link href={signInHref} className="self-start rounded bg-accent px-3 py-1.5 font-semibold text-accent-ink">
            Sign in as {inv.email}
          </Link>
        </div>
      )}
    </section>
  );
}
