"use client";
/** Users and roles of the tenant, with invitation by e-mail (a one-time link to set a password). */
import { zodResolver } from "@hookform/resolvers/zod";
import { useState } from "react";
import { useForm } from "react-hook-form";
import useSWR from "swr";
import { z } from "zod";
import type { InvitationDto, MemberDto } from "@/lib/admin/users";
import { ROLES, type Role } from "@/lib/types";
import { fetchJson, sendJson } from "@/lib/client/fetcher";
import { useNow } from "@/lib/client/hooks";
import { fmtTime } from "@/lib/client/format";

const inviteForm = z.object({ email: z.string().trim().email("Enter a valid e-mail address."), role: z.enum(ROLES) });

export function AdminUsers({ selfUserId }: { selfUserId: number }) {
  const { data, error, mutate } = useSWR("/api/admin/users", (u: string) => fetchJson<{ members: MemberDto[]; invitations: InvitationDto[] }>(u));
  const now = useNow(60_000);
  const [msg, setMsg] = useState<string | null>(null);
  const [err, setErr] = useState<string | null>(null);
  const {
    register,
    handleSubmit,
    reset,
    formState: { errors, isSubmitting },
  } = useForm<z.infer<typeof inviteForm>>({ resolver: zodResolver(inviteForm), defaultValues: { email: "", role: "viewer" } });
  const invite = handleSubmit(async (v) => {
    setErr(null);
    setMsg(null);
    try {
      const r = await sendJson<{ invitation: InvitationDto & { mailed: boolean } }>("/api/admin/users", "POST", v);
      setMsg(r.invitation.mailed ? `Invitation sent to ${v.email}. The link is valid until ${fmtTime(r.invitation.expiresAt)}.` : "Invitation stored, but no mail service is running.");
      reset({ email: "", role: v.role });
      void mutate();
    } catch (x) {
      setErr(x instanceof Error ? x.message : String(x));
    }
  });
  const change = async (m: MemberDto, role: Role) => {
    const reason = window.prompt(`Reason for changing ${m.email} from ${m.role} to ${role}:`);
    if (!reason) return;
    try {
      await sendJson(`/api/admin/users/${m.membershipId}`, "PATCH", { role, reason });
      void mutate();
    } catch (x) {
      setErr(x instanceof Error ? x.message : String(x));
    }
  };
  const remove = async (m: MemberDto) => {
    const reason = window.prompt(`Reason for removing ${m.email} from this tenant:`);
    if (!reason) return;
    try {
      await sendJson(`/api/admin/users/${m.membershipId}`, "DELETE", { reason });
      void mutate();
    } catch (x) {
      setErr(x instanceof Error ? x.message : String(x));
    }
  };
  const sel = "rounded border border-line bg-ground px-2 py-1 text-sm";
  return (
    <section className="flex flex-col gap-3" aria-label="Users and roles" data-testid="admin-users">
      <form onSubmit={invite} noValidate className="flex flex-wrap items-end gap-3 rounded-md border border-line bg-surface p-3">
        <label className="flex flex-col text-sm">
          E-mail
          <input type="email" {...register("email")} className={`${sel} w-72`} data-testid="invite-email" />
          {errors.email && <span className="text-xs text-urgent">{errors.email.message}</span>}
        </label>
        <label className="flex flex-col text-sm">
          Role
          <select {...register("role")} className={sel} data-testid="invite-role">
            {ROLES.map((r) => (
              <option key={r}>{r}</option>
            ))}
          </select>
        </label>
        <button type="submit" disabled={isSubmitting} className="rounded bg-accent px-3 py-1 font-semibold text-accent-ink disabled:opacity-60">
          Invite
        </button>
        {msg && <p role="status" className="w-full text-sm">{msg}</p>}
        {err && <p role="alert" className="w-full text-sm text-urgent">{err}</p>}
      </form>
      {error && <p className="text-sm text-urgent">{(error as Error).message}</p>}
      <table className="w-full rounded-md border border-line bg-surface text-sm">
        <thead>
          <tr className="border-b border-line text-left">
            <th className="px-2 py-1">Name</th>
            <th className="px-2 py-1">E-mail</th>
            <th className="px-2 py-1">Role</th>
            <th className="px-2 py-1">Last sign-in</th>
            <th className="px-2 py-1">
              <span className="sr-only">Actions</span>
            </th>
          </tr>
        </thead>
        <tbody>
          {data?.members.map((m) => (
            <tr key={m.membershipId} className="border-b border-line/50">
              <td className="px-2 py-1">{m.name}</td>
              <td className="px-2 py-1">{m.email}</td>
              <td className="px-2 py-1">
                <select aria-label={`Role of ${m.email}`} value={m.role} disabled={m.userId === selfUserId} onChange={(e) => void change(m, e.target.value as Role)} className={sel}>
                  {ROLES.map((r) => (
                    <option key={r}>{r}</option>
                  ))}
                </select>
              </td>
              <td className="num px-2 py-1">{m.lastSignInAt ? fmtTime(m.lastSignInAt) : "never"}</td>
              <td className="px-2 py-1">
                {m.userId !== selfUserId && (
                  <button type="button" onClick={() => void remove(m)} className="rounded border border-line px-2 py-0.5 text-xs">
                    Remove
                  </button>
                )}
              </td>
            </tr>
          ))}
        </tbody>
      </table>
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
    </section>
  );
}
