/**
 * A stand-in for `@/lib/auth/guard` in route tests: the same role rule applied to a chosen user,
 * so what is under test is each route's role, tenancy and data. Use it from a `vi.mock` factory:
 *   vi.mock("@/lib/auth/guard", async () => (await import("../setup/guard-stand-in")).guardStandIn(() => current));
 */
import { ForbiddenError, UnauthenticatedError } from "@/lib/domain/errors";
import { roleAtLeast, type Role, type TenantContext } from "@/lib/domain/types";

export function guardStandIn(currentUser: () => TenantContext | null) {
  return {
    requireContext: async (min: Role = "viewer") => {
      const current = currentUser();
      if (!current) throw new UnauthenticatedError();
      if (!roleAtLeast(current.role, min)) throw new ForbiddenError(`needs ${min}`);
      return current;
    },
    getContextOrNull: async () => currentUser(),
  };
}
