/**
 * THE table of protected routes and the lowest role each one admits (docs/architecture.md §7).
 * Helpers who add a route add a row here; tests/auth/guard.test.ts checks every row for every
 * role, signed out, and (for rows with an id of the caller's tenant) against another tenant's id.
 *
 * Path placeholders are filled from the auth fixture: `:loopId`, `:siteId` (the caller's own
 * tenant, or the other tenant's for the isolation check), and `:none` — an id that exists
 * nowhere (999999), for routes that act on one row: the guard must answer before the lookup,
 * so a refused role still gets 403 and an admitted one gets 404/422, never a change.
 *
 * For an admitted role the route must answer anything but 401, 403 or a 5xx (a 404 or 422 for a
 * fixture that lacks data or a body that does not fit is fine: the guard let the call through).
 * Set `admitted` to pin exact statuses when they are known.
 */
import type { Role } from "@/lib/domain/types";

export type Method = "GET" | "POST" | "PUT" | "PATCH" | "DELETE";

export interface RouteCase {
  method: Method;
  path: string;
  minRole: Role;
  /** The route file under app/api that must exist; rows whose file is missing are skipped. */
  file: string;
  body?: unknown;
  /** Exact statuses for an admitted role, when known. */
  admitted?: number[];
  /** Whether a call of another tenant's `:loopId`/`:siteId` must be 404 (default: when the path has one). */
  tenantScoped?: boolean;
}

export const ROUTES: RouteCase[] = [
  // web: session and sites
  { method: "GET", path: "/api/session", minRole: "viewer", file: "session/route.ts", admitted: [200] },
  { method: "GET", path: "/api/sites/:siteId", minRole: "viewer", file: "sites/[siteId]/route.ts", admitted: [200] },
  { method: "POST", path: "/api/session/tenant", minRole: "viewer", file: "session/tenant/route.ts", body: { tenantId: 999999 }, admitted: [404] },

  // pipeline: loops
  { method: "GET", path: "/api/loops", minRole: "viewer", file: "loops/route.ts", admitted: [200] },
  { method: "GET", path: "/api/loops/:loopId", minRole: "viewer", file: "loops/[loopId]/route.ts", admitted: [200] },
  {
    method: "GET",
    path: "/api/loops/:loopId/history?from=2026-01-01T00:00:00Z&to=2026-01-01T01:00:00Z&maxPoints=100",
    minRole: "viewer",
    file: "loops/[loopId]/history/route.ts",
    admitted: [200],
  },
  { method: "POST", path: "/api/loops", minRole: "engineer", file: "loops/route.ts", body: {}, admitted: [422] },
  { method: "PATCH", path: "/api/loops/:loopId", minRole: "engineer", file: "loops/[loopId]/route.ts", body: {}, admitted: [422] },
  { method: "GET", path: "/api/loops/:loopId/step-tests", minRole: "viewer", file: "loops/[loopId]/step-tests/route.ts", admitted: [200] },
  // The upload takes multipart only (a JSON body is 415 before the role check): sent without a body.
  { method: "POST", path: "/api/loops/:loopId/step-tests", minRole: "engineer", file: "loops/[loopId]/step-tests/route.ts" },
  { method: "GET", path: "/api/loops/:loopId/step-tests/:none", minRole: "viewer", file: "loops/[loopId]/step-tests/[stepTestId]/route.ts", admitted: [404] },
  { method: "GET", path: "/api/loops/:loopId/step-tests/:none/data", minRole: "viewer", file: "loops/[loopId]/step-tests/[stepTestId]/data/route.ts", admitted: [404] },
  { method: "POST", path: "/api/loops/:loopId/step-tests/:none/apply", minRole: "engineer", file: "loops/[loopId]/step-tests/[stepTestId]/apply/route.ts", body: {} },
  // The backfill upload takes text/csv only (a JSON body is 415 before the role check): sent without a body (422).
  { method: "GET", path: "/api/loops/:loopId/exports", minRole: "viewer", file: "loops/[loopId]/exports/route.ts", admitted: [200] },
  { method: "POST", path: "/api/loops/:loopId/exports", minRole: "engineer", file: "loops/[loopId]/exports/route.ts", admitted: [422] },
  { method: "GET", path: "/api/loops/:loopId/exports/:none", minRole: "viewer", file: "loops/[loopId]/exports/[exportId]/route.ts", admitted: [404] },
  { method: "GET", path: "/api/loops/:loopId/exports/:none/data", minRole: "viewer", file: "loops/[loopId]/exports/[exportId]/data/route.ts", admitted: [404] },
  { method: "GET", path: "/api/loops/:loopId/backfills", minRole: "engineer", file: "loops/[loopId]/backfills/route.ts", admitted: [200] },
  { method: "POST", path: "/api/loops/:loopId/backfills", minRole: "engineer", file: "loops/[loopId]/backfills/route.ts", admitted: [422] },
  { method: "GET", path: "/api/loops/:loopId/backfills/:none", minRole: "engineer", file: "loops/[loopId]/backfills/[jobId]/route.ts", admitted: [404] },
  { method: "DELETE", path: "/api/loops/:loopId/backfills/:none", minRole: "engineer", file: "loops/[loopId]/backfills/[jobId]/route.ts", admitted: [404] },
  { method: "GET", path: "/api/diagnostics/ingest", minRole: "admin", file: "diagnostics/ingest/route.ts" },

  // alarms
  { method: "GET", path: "/api/alarms", minRole: "viewer", file: "alarms/route.ts", admitted: [200] },
  { method: "GET", path: "/api/alarms/kpis", minRole: "viewer", file: "alarms/kpis/route.ts" },
  { method: "GET", path: "/api/alarm-policies?scope=tenant", minRole: "viewer", file: "alarm-policies/route.ts" },
  { method: "PUT", path: "/api/alarm-policies?scope=tenant", minRole: "admin", file: "alarm-policies/route.ts", body: {} },
  {
    method: "PUT",
    path: "/api/alarm-policies?scope=loop&id=:loopId",
    minRole: "engineer",
    file: "alarm-policies/route.ts",
    body: {},
    tenantScoped: false,
  },
  { method: "GET", path: "/api/alarms/:none", minRole: "viewer", file: "alarms/[alarmId]/route.ts", admitted: [404] },
  { method: "POST", path: "/api/alarms/:none/acknowledge", minRole: "operator", file: "alarms/[alarmId]/acknowledge/route.ts", body: { comment: "seen" }, admitted: [404] },
  { method: "POST", path: "/api/alarms/:none/shelve", minRole: "operator", file: "alarms/[alarmId]/shelve/route.ts", body: { minutes: 30, reason: "test" }, admitted: [404] },
  { method: "POST", path: "/api/alarms/:none/unshelve", minRole: "operator", file: "alarms/[alarmId]/unshelve/route.ts", body: {} },
  { method: "POST", path: "/api/alarms/:none/out-of-service", minRole: "engineer", file: "alarms/[alarmId]/out-of-service/route.ts", body: { reason: "test" } },
  { method: "POST", path: "/api/alarms/:none/return-to-service", minRole: "engineer", file: "alarms/[alarmId]/return-to-service/route.ts", body: {} },
  { method: "GET", path: "/api/outbox", minRole: "admin", file: "outbox/route.ts" },

  // console: administration
  { method: "GET", path: "/api/admin/users", minRole: "admin", file: "admin/users/route.ts", admitted: [200] },
  { method: "POST", path: "/api/admin/users", minRole: "admin", file: "admin/users/route.ts", body: {} },
  { method: "PATCH", path: "/api/admin/users/:none", minRole: "admin", file: "admin/users/[membershipId]/route.ts", body: { role: "viewer" } },
  { method: "DELETE", path: "/api/admin/users/:none", minRole: "admin", file: "admin/users/[membershipId]/route.ts" },
  { method: "GET", path: "/api/admin/devices", minRole: "admin", file: "admin/devices/route.ts", admitted: [200] },
  { method: "POST", path: "/api/admin/devices", minRole: "admin", file: "admin/devices/route.ts", body: {} },
  { method: "DELETE", path: "/api/admin/devices/:none", minRole: "admin", file: "admin/devices/[deviceId]/route.ts" },
  { method: "GET", path: "/api/admin/sparkplug", minRole: "admin", file: "admin/sparkplug/route.ts", admitted: [200] },
  { method: "POST", path: "/api/admin/sparkplug", minRole: "admin", file: "admin/sparkplug/route.ts", body: {} },
  { method: "PUT", path: "/api/admin/sparkplug/mappings", minRole: "admin", file: "admin/sparkplug/mappings/route.ts", body: {} },
  { method: "DELETE", path: "/api/admin/sparkplug/mappings/:none", minRole: "admin", file: "admin/sparkplug/mappings/[loopId]/route.ts" },
  { method: "GET", path: "/api/admin/sites", minRole: "viewer", file: "admin/sites/route.ts", admitted: [200] },
  { method: "POST", path: "/api/admin/sites", minRole: "admin", file: "admin/sites/route.ts", body: {} },
  { method: "POST", path: "/api/admin/sites/:siteId/areas", minRole: "admin", file: "admin/sites/[siteId]/areas/route.ts", body: {} },
  { method: "GET", path: "/api/admin/sites/:siteId/shifts", minRole: "viewer", file: "admin/sites/[siteId]/shifts/route.ts", admitted: [200] },
  { method: "PUT", path: "/api/admin/sites/:siteId/shifts", minRole: "admin", file: "admin/sites/[siteId]/shifts/route.ts", body: {}, admitted: [422] },
  { method: "GET", path: "/api/admin/notification-rules", minRole: "admin", file: "admin/notification-rules/route.ts", admitted: [200] },
  { method: "POST", path: "/api/admin/notification-rules", minRole: "admin", file: "admin/notification-rules/route.ts", body: {} },
  { method: "PUT", path: "/api/admin/notification-rules/:none", minRole: "admin", file: "admin/notification-rules/[ruleId]/route.ts", body: {} },
  { method: "DELETE", path: "/api/admin/notification-rules/:none", minRole: "admin", file: "admin/notification-rules/[ruleId]/route.ts" },
  { method: "GET", path: "/api/admin/loops/:loopId", minRole: "engineer", file: "admin/loops/[loopId]/route.ts", admitted: [200] },
  { method: "GET", path: "/api/admin/config-changes", minRole: "engineer", file: "admin/config-changes/route.ts", admitted: [200] },

  // operator log, loop timeline, shift handover
  { method: "GET", path: "/api/notes", minRole: "viewer", file: "notes/route.ts", admitted: [200] },
  { method: "POST", path: "/api/notes", minRole: "operator", file: "notes/route.ts", body: {}, admitted: [422] },
  { method: "GET", path: "/api/loops/:loopId/timeline", minRole: "viewer", file: "loops/[loopId]/timeline/route.ts", admitted: [200] },
  { method: "GET", path: "/api/reports/handover?siteId=:siteId", minRole: "viewer", file: "reports/handover/route.ts", admitted: [200] },
  { method: "POST", path: "/api/reports/handover/confirm", minRole: "operator", file: "reports/handover/confirm/route.ts", body: {}, admitted: [422] },
  { method: "GET", path: "/api/reports/worst-loops", minRole: "viewer", file: "reports/worst-loops/route.ts", admitted: [200] },
  { method: "GET", path: "/api/reports/worst-loops?siteId=:siteId&format=csv", minRole: "viewer", file: "reports/worst-loops/route.ts", admitted: [200], tenantScoped: false },
  { method: "GET", path: "/api/reports/fleet-health", minRole: "viewer", file: "reports/fleet-health/route.ts", admitted: [200] },
  { method: "PUT", path: "/api/admin/users/:none/sites", minRole: "admin", file: "admin/users/[membershipId]/sites/route.ts", body: { siteIds: [], reason: "test" }, admitted: [404] },
  { method: "GET", path: "/api/reports/subscriptions", minRole: "viewer", file: "reports/subscriptions/route.ts", admitted: [200] },
  { method: "POST", path: "/api/reports/subscriptions", minRole: "viewer", file: "reports/subscriptions/route.ts", body: {}, admitted: [422] },
  { method: "DELETE", path: "/api/reports/subscriptions/:none", minRole: "viewer", file: "reports/subscriptions/[subscriptionId]/route.ts", admitted: [404] },
  { method: "GET", path: "/api/admin/loop-inventory", minRole: "engineer", file: "admin/loop-inventory/route.ts", admitted: [200] },
  { method: "POST", path: "/api/admin/loop-inventory", minRole: "engineer", file: "admin/loop-inventory/route.ts", body: {}, admitted: [422] },
  // engineering work list and routine-data findings (never alarms)
  { method: "GET", path: "/api/work-list", minRole: "viewer", file: "work-list/route.ts", admitted: [200] },
  { method: "GET", path: "/api/work-list?status=all", minRole: "viewer", file: "work-list/route.ts", admitted: [200] },
  { method: "GET", path: "/api/work-list/:none", minRole: "viewer", file: "work-list/[itemId]/route.ts", admitted: [404] },
  { method: "PATCH", path: "/api/work-list/:none", minRole: "engineer", file: "work-list/[itemId]/route.ts", body: { note: "checked" }, admitted: [404] },
  { method: "GET", path: "/api/work-list/findings", minRole: "viewer", file: "work-list/findings/route.ts", admitted: [200] },
  { method: "GET", path: "/api/work-list/rules", minRole: "engineer", file: "work-list/rules/route.ts", admitted: [200] },
  { method: "POST", path: "/api/work-list/rules", minRole: "engineer", file: "work-list/rules/route.ts", body: {}, admitted: [422] },
  { method: "DELETE", path: "/api/work-list/rules/:none", minRole: "engineer", file: "work-list/rules/[ruleId]/route.ts", admitted: [404] },
  { method: "GET", path: "/api/work-list/settings", minRole: "engineer", file: "work-list/settings/route.ts", admitted: [200] },
  { method: "PUT", path: "/api/work-list/settings", minRole: "admin", file: "work-list/settings/route.ts", body: {}, admitted: [422] },
  { method: "GET", path: "/api/loops/:loopId/finding", minRole: "viewer", file: "loops/[loopId]/finding/route.ts", admitted: [200] },
];

/**
 * Route files that are deliberately not rows above: public by design, or covered elsewhere
 * because calling them would end the matrix's own sessions. Every other file under app/api must
 * have a row (guard.test.ts fails on a route that is in neither list).
 */
export const NOT_IN_MATRIX: Record<string, string> = {
  "auth/[...nextauth]/route.ts": "next-auth's own endpoints (sign-in, CSRF, sign-out): public by design; tests/auth/signin.test.ts",
  "health/route.ts": "public health summary without tenant data; tests/auth/health.test.ts and socket.test.ts",
  "session/signout-everywhere/route.ts": "ends the caller's sessions; tests/auth/signin.test.ts",
};
