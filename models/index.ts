/**
 * Sequelize models of Rimguard and their associations. Call `initModels(sequelize)` once per
 * process (lib/data/db/sequelize.ts does it for the shared connection; tests through
 * tests/setup/db.ts). The model classes are module singletons: the last `initModels` call binds
 * them to its Sequelize instance.
 *
 * Conventions: attributes camelCase in TypeScript, columns snake_case (underscored); times
 * DATETIME(3) in UTC, except the history tables whose `t` is BIGINT epoch ms. The schema itself
 * is defined by migrations/ (never by `sync()`); these definitions must match it.
 * Every tenant-owned model has `tenantId`: query it through lib/data/tenancy.ts.
 */
import type { Sequelize } from "sequelize";
import { initAlarmModels } from "./alarm";
import { initDeviceModels } from "./device";
import { initHistoryModels } from "./history";
import { initLoopModels } from "./loop";
import { initNotificationModels } from "./notification";
import { initTenantModels } from "./tenant";
import { initUserModels } from "./user";

export * from "./alarm";
export * from "./device";
export * from "./history";
export * from "./loop";
export * from "./notification";
export * from "./tenant";
export * from "./user";

export function initModels(sequelize: Sequelize) {
  const m = {
    ...initTenantModels(sequelize),
    ...initUserModels(sequelize),
    ...initDeviceModels(sequelize),
    ...initLoopModels(sequelize),
    ...initAlarmModels(sequelize),
    ...initNotificationModels(sequelize),
    ...initHistoryModels(sequelize),
  };
  const { Tenant, Site, Area, User, Membership, Invitation, DeviceCredential, Loop } = m;
  const { StepTest, ConfigChange, EstimatorCheckpoint, LoopState } = m;
  const { AlarmPolicy, Alarm, AlarmOccurrence, AlarmEvent, NotificationRule, NotificationSent } = m;

  Tenant.hasMany(Site, { foreignKey: "tenantId", as: "sites" });
  Site.belongsTo(Tenant, { foreignKey: "tenantId", as: "tenant" });
  Site.hasMany(Area, { foreignKey: "siteId", as: "areas" });
  Area.belongsTo(Site, { foreignKey: "siteId", as: "site" });
  Site.hasMany(Loop, { foreignKey: "siteId", as: "loops" });
  Area.hasMany(Loop, { foreignKey: "areaId", as: "loops" });

  User.hasMany(Membership, { foreignKey: "userId", as: "memberships" });
  Membership.belongsTo(User, { foreignKey: "userId", as: "user" });
  Tenant.hasMany(Membership, { foreignKey: "tenantId", as: "memberships" });
  Membership.belongsTo(Tenant, { foreignKey: "tenantId", as: "tenant" });
  Invitation.belongsTo(Tenant, { foreignKey: "tenantId", as: "tenant" });
  Invitation.belongsTo(User, { foreignKey: "invitedBy", as: "inviter" });

  DeviceCredential.belongsTo(Tenant, { foreignKey: "tenantId", as: "tenant" });
  DeviceCredential.belongsTo(Site, { foreignKey: "siteId", as: "site" });

  Loop.belongsTo(Tenant, { foreignKey: "tenantId", as: "tenant" });
  Loop.belongsTo(Site, { foreignKey: "siteId", as: "site" });
  Loop.belongsTo(Area, { foreignKey: "areaId", as: "area" });
  Loop.belongsTo(Loop, { foreignKey: "cascadeMasterLoopId", as: "cascadeMaster" });
  Loop.hasMany(Alarm, { foreignKey: "loopId", as: "alarms" });
  Loop.hasOne(LoopState, { foreignKey: "loopId", as: "state" });
  Loop.hasOne(EstimatorCheckpoint, { foreignKey: "loopId", as: "checkpoint" });
  Loop.hasMany(StepTest, { foreignKey: "loopId", as: "stepTests" });
  LoopState.belongsTo(Loop, { foreignKey: "loopId", as: "loop" });
  StepTest.belongsTo(Loop, { foreignKey: "loopId", as: "loop" });
  StepTest.belongsTo(User, { foreignKey: "uploadedBy", as: "uploader" });
  ConfigChange.belongsTo(User, { foreignKey: "userId", as: "user" });

  Alarm.belongsTo(Loop, { foreignKey: "loopId", as: "loop" });
  Alarm.hasMany(AlarmEvent, { foreignKey: "alarmId", as: "events" });
  Alarm.hasMany(AlarmOccurrence, { foreignKey: "alarmId", as: "occurrences" });
  AlarmEvent.belongsTo(Alarm, { foreignKey: "alarmId", as: "alarm" });
  AlarmEvent.belongsTo(User, { foreignKey: "userId", as: "user" });
  AlarmOccurrence.belongsTo(Alarm, { foreignKey: "alarmId", as: "alarm" });
  AlarmOccurrence.belongsTo(Area, { foreignKey: "areaId", as: "area" });
  AlarmPolicy.belongsTo(Tenant, { foreignKey: "tenantId", as: "tenant" });

  NotificationRule.belongsTo(Area, { foreignKey: "areaId", as: "area" });
  NotificationSent.belongsTo(NotificationRule, { foreignKey: "ruleId", as: "rule" });
  NotificationSent.belongsTo(Alarm, { foreignKey: "alarmId", as: "alarm" });

  return m;
}

export type Models = ReturnType<typeof initModels>;
