import { describeInvitation } from "@/lib/admin/users";
import { InviteForm } from "./invite-form";

export const dynamic = "force-dynamic";
export const metadata = { title: "Set your password · Rimguard" };

export default async function InvitePage({ params }: { params: Promise<{ token: string }> }) {
  const { token } = await params;
  const inv = await describeInvitation(token);
  return (
    <section className="w-full max-w-md rounded-lg border border-line bg-surface p-6" aria-labelledby="invite-title">
      <h1 id="invite-title" className="mb-3 text-xl font-semibold">
        {inv ? `Join ${inv.tenantName} as ${inv.role}` : "This link cannot be used"}
      </h1>
      {inv ? (
        <InviteForm token={token} email={inv.email} />
      ) : (
        <p className="text-sm text-muted">The invitation link is unknown, already used or expired. Ask your administrator for a new one.</p>
      )}
    </section>
  );
}
