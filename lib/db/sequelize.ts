/**
 * Temporary: lib/reports and lib/work-list still import the connection from here until their
 * SQL moves into lib/data (engineers "reports" and "live"). The home is lib/data/db/sequelize.ts;
 * the lead deletes this file after merging those branches.
 */
export { getDb, getSequelize } from "@/lib/data/db/sequelize";
