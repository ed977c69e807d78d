/**
 * A stand-in for the session guard in route tests (lib/auth/guard.ts has its own tests). A test
 * file replaces the guard with
 *   vi.mock("@/lib/auth/guard", async () => (await import("@/tests/helpers/guard-stand-in")).guardStandIn());
 * and chooses who is signed in with `signInAs` (null: nobody, the guard's 401), or passes
 * `currentUser`, a getter of its own variable.
 */
import { ForbiddenError, UnauthenticatedError } from "@/lib/domain/errors";
import { roleAtLeast, type Role, type TenantContext } from "@/lib/domain/types";

let current: TenantContext | null = null;

/** The context the guard returns from now on. */
export function signInAs(ctx: TenantContext | null): void {
  current = ctx;
}

/**
 * The guard's `requireContext`: 401 when nobody is signed in; with `checkRole` (the default) also
 * 403 below the route's minimum role, as the real guard does.
 */
export function guardStandIn({ checkRole = true, currentUser = () => current }: { checkRole?: boolean; currentUser?: () => TenantContext | null } = {}) {
  return {
    requireContext: async (min: Role = "viewer"): Promise<TenantContext> => {
      const who = currentUser();
      if (!who) throw new UnauthenticatedError();
      if (checkRole && !roleAtLeast(who.role, min)) throw new ForbiddenError(`needs ${min}`);
      return who;
    },
    getContextOrNull: async () => currentUser(),
  };
}
