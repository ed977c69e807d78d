/** Pure alarm logic (no I/O): state model, condition evaluation, policies, KPIs. */
export * from "./state-machine";
export * from "./conditions";
export * from "./policy";
export * from "./kpis";
