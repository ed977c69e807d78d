/**
 * Temporary: lib/reports and lib/work-list still import the tenancy guard from here until their
 * SQL moves into lib/data (engineers "reports" and "live"). The home is lib/data/tenancy.ts; the
 * lead deletes this file after merging those branches.
 */
export { findOwned, findOwnedOrThrow, scoped, siteScopeSql, siteVisible, assertSiteVisible, tenantWhere, assertOwned } from "@/lib/data/tenancy";
