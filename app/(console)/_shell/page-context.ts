/** What every console page starts with: the signed-in context, and its document title. */
import { redirect } from "next/navigation";
import { getContextOrNull } from "@/lib/auth/guard";
import type { TenantContext } from "@/lib/domain/types";

/** The signed-in tenant context; signed out, the page redirects to the sign-in form. */
export async function requirePageContext(): Promise<TenantContext> {
  const ctx = await getContextOrNull();
  if (!ctx) redirect("/signin");
  return ctx;
}

/** A console page's metadata: its title, then the product's name. */
export function pageMetadata(title: string): { title: string } {
  return { title: `${title} · Rimguard` };
}
