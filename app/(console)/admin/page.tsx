import type { Metadata } from "next";
import { redirect } from "next/navigation";
import { getContextOrNull } from "@/lib/auth/guard";
import { roleAtLeast } from "@/lib/types";
import { EmptyState } from "../_shell/empty-state";

export const metadata: Metadata = { title: "Admin" };

export default async function AdminPage() {
  const ctx = await getContextOrNull();
  if (!ctx) redirect("/signin");
  if (!roleAtLeast(ctx.role, "admin")) {
    return (
      <EmptyState title="Admin">
        <p>This page needs the admin role; you are signed in as {ctx.role}.</p>
      </EmptyState>
    );
  }
  return (
    <EmptyState title="Admin">
      <p>Users and roles, device credentials, sites, alarm thresholds and notification rules arrive with the administration pages.</p>
    </EmptyState>
  );
}
