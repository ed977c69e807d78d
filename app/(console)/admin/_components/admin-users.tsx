"use client";
/** Users and roles of the tenant, with invitation by e-mail (a one-time link to set a password). */
import { useState } from "react";
import useSWR from "swr";
import { z } from "zod";
import type { SiteDto } from "@/lib/data/admin/sites";
import type { InvitationDto, MemberDto } from "@/lib/data/admin/users";
import { ROLES, roleAtLeast, type Role } from "@/lib/domain/types";
import { fetchJson, sendJson } from "@/lib/client/fetcher";
import { useNow } from "@/lib/client/hooks";
import { fmtTime } from "@/lib/client/format";
import { Field, INPUT_CLASS, useServerError } from "@/app/_components/form-field";
import { ReasonDialog } from "@/app/_components/reason-dialog";
import { MemberSites } from "./admin-member-sites";
import { useZodForm } from "@/app/_components/use-zod-form";
import { AdminTable } from "./admin-table";
import { AdminCreateForm } from "./admin-create-form";

const inviteForm = z.object({ email: z.string().trim().email("Enter a valid e-mail address."), role: z.enum(ROLES) });

export function AdminUsers({ selfUserId }: { selfUserId: number }) {
  const { data, error, mutate } = useSWR("/api/admin/users", (u: string) => fetchJson<{ members: MemberDto[]; invitations: InvitationDto[] }>(u));
  const sites = useSWR("/api/admin/sites", (u: string) => fetchJson<{ sites: SiteDto[] }>(u)).data?.sites ?? [];
  const now = useNow(60_000);
  const [msg, setMsg] = useState<string | null>(null);
  const { error: err, attempt } = useServerError();
  const [pending, setPending] = useState<{ member: MemberDto; role: Role | null } | null>(null);
  const { register, handleSubmit, reset, formState: { errors, isSubmitting } } = useZodForm(inviteForm, { email: "", role: "viewer" });
  const invite = handleSubmit((v) =>
    attempt(async () => {
      setMsg(null);
      const r = await sendJson<{ invitation: InvitationDto & { mailed: boolean } }>("/api/admin/users", "POST", v);
      setMsg(r.invitation.mailed ? `Invitation sent to ${v.email}. The link is valid until ${fmtTime(r.invitation.expiresAt)}.` : "Invitation stored, but no mail service is running.");
      reset({ email: "", role: v.role });
      void mutate();
    }),
  );
  return (
    <section className="flex flex-col gap-3" aria-label="Users and roles" data-testid="admin-users">
      <AdminCreateForm onSubmit={invite} submitting={isSubmitting} submitLabel="Invite" error={err} status={msg}>
        <Field label="E-mail" error={errors.email}>
          <input type="email" {...register("email")} className={`${INPUT_CLASS} w-72`} data-testid="invite-email" />
        </Field>
        <Field label="Role">
          <select {...register("role")} className={INPUT_CLASS} data-testid="invite-role">
            {ROLES.map((r) => (
              <option key={r}>{r}</option>
            ))}
          </select>
        </Field>
      </AdminCreateForm>
      <AdminTable error={error} columns={["Name", "E-mail", "Role", "Sites", "Last sign-in", <span key="actions" className="sr-only">Actions</span>]}>
        {data?.members.map((m) => (
          <tr key={m.membershipId} className="border-b border-line/50">
            <td className="px-2 py-1">{m.name}</td>
            <td className="px-2 py-1">{m.email}</td>
            <td className="px-2 py-1">
              <select aria-label={`Role of ${m.email}`} value={m.role} disabled={m.userId === selfUserId} onChange={(e) => setPending({ member: m, role: e.target.value as Role })} className={INPUT_CLASS}>
                {ROLES.map((r) => (
                  <option key={r}>{r}</option>
                ))}
              </select>
            </td>
            <td className="px-2 py-1">
              <MemberSites member={m} sites={sites.map((s) => ({ id: s.id, name: s.name }))} self={m.userId === selfUserId} onChanged={() => void mutate()} />
            </td>
            <td className="num px-2 py-1">{m.lastSignInAt ? fmtTime(m.lastSignInAt) : "never"}</td>
            <td className="px-2 py-1">
              {m.userId !== selfUserId && (
                <button type="button" onClick={() => setPending({ member: m, role: null })} className="rounded border border-line px-2 py-0.5 text-xs">
                  Remove
                </button>
              )}
            </td>
          </tr>
        ))}
      </AdminTable>
      {data && data.invitations.length > 0 && (
        <div>
          <h3 className="mb-1 font-semibold">Invitations</h3>
          <ul className="text-sm">
            {data.invitations.map((i) => (
              <li key={i.id} className="num">
                {i.email} as {i.role} — {i.usedAt ? `accepted ${fmtTime(i.usedAt)}` : new Date(i.expiresAt).getTime() < now ? "expired" : `open until ${fmtTime(i.expiresAt)}`}
              </li>
            ))}
          </ul>
        </div>
      )}
      {pending && <MemberChangeDialog {...pending} onDone={() => { setPending(null); void mutate(); }} onClose={() => setPending(null)} />}
    </section>
  );
}

/** A role change (`role` set) or a removal (`role` null), with its reason. */
function MemberChangeDialog({ member: m, role, onDone, onClose }: { member: MemberDto; role: Role | null; onDone: () => void; onClose: () => void }) {
  const loses = (r: Role | null) => roleAtLeast(m.role, "operator") && (r === null || !roleAtLeast(r, "operator"));
  return (
    <ReasonDialog
      title={role ? "Change role" : "Remove member"}
      lead={role ? `${m.email}: ${m.role} → ${role}` : `${m.email} (${m.role}) loses access to this tenant.`}
      caution={loses(role) ? `From now on ${m.email} can no longer acknowledge or shelve alarms; make sure the shift still has someone who can.` : undefined}
      submitLabel={role ? "Change role" : "Remove"}
      onConfirm={({ reason }) =>
        role ? sendJson(`/api/admin/users/${m.membershipId}`, "PATCH", { role, reason }) : sendJson(`/api/admin/users/${m.membershipId}`, "DELETE", { reason })
      }
      onDone={onDone}
      onClose={onClose}
    />
  );
}
