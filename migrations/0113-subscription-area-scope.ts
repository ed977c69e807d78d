/**
 * Area scope of report subscriptions: a handover subscription may name one area of its site (that
 * area's handover only); weekly reports may be limited to an area too. The area column came with
 * the subscriptions; this makes the pair consistent: an area subscription names the area's own
 * site (composite key to areas (id, site_id)), and the scheduler's look-up of a site's area
 * subscribers has its index. (MariaDB refuses a CHECK on a column with a cascading key, so "an area
 * names its site" is the subscription schema's rule, lib/reports/delivery.ts.)
 */
import type { MigrationFn } from "@/lib/data/db/migrate";

export const up: MigrationFn = async ({ context: qi }) => {
  await qi.addIndex("areas", ["id", "site_id"], { unique: true, name: "areas_id_site" });
  await qi.addIndex("report_subscriptions", ["area_id", "site_id"], { name: "report_subscriptions_area_site" });
  await qi.sequelize.query(
    `ALTER TABLE report_subscriptions ADD CONSTRAINT report_subscriptions_area_of_site
       FOREIGN KEY (area_id, site_id) REFERENCES areas (id, site_id) ON DELETE CASCADE ON UPDATE CASCADE`,
  );
  await qi.addIndex("report_subscriptions", ["tenant_id", "report", "site_id", "area_id"], { name: "report_subscriptions_scope" });
};

export const down: MigrationFn = async ({ context: qi }) => {
  await qi.removeIndex("report_subscriptions", "report_subscriptions_scope");
  await qi.sequelize.query("ALTER TABLE report_subscriptions DROP FOREIGN KEY report_subscriptions_area_of_site");
  // InnoDB drops the index it made for area_id's own key once the (area_id, site_id) index can
  // serve that key; give the key its index back before the composite one goes.
  const [own] = await qi.sequelize.query("SHOW INDEX FROM report_subscriptions WHERE Key_name = 'area_id'");
  if (!(own as unknown[]).length) await qi.addIndex("report_subscriptions", ["area_id"], { name: "area_id" });
  await qi.removeIndex("report_subscriptions", "report_subscriptions_area_site");
  await qi.removeIndex("areas", "areas_id_site");
};
