/**
 * A stand-in for the server in the process tests: starts the simulators child exactly as the
 * server does (startSimulators), prints the child's pid and then idles until it is killed.
 * Run as `node --import tsx tests/simulators/parent-fixture.ts <args for simulators/index.ts>`.
 */
import path from "node:path";
import { getConfig } from "@/lib/config";
import { Bus, systemClock, type ServerContext } from "@/server/context";
import { startSimulators } from "@/server/simulators-process";

const root = path.resolve(import.meta.dirname, "../..");
const ctx: ServerContext = { config: getConfig(process.env), io: null, bus: new Bus(), clock: systemClock, services: new Map() };
const svc = await startSimulators(ctx, { root, args: process.argv.slice(2) });
console.log(`child-pid ${svc.pid}`);
setInterval(() => {}, 60_000);
