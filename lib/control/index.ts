/**
 * The numerical core of the product (docs/architecture.md §3). Pure TypeScript, no I/O.
 * Polynomial conventions (z-descending, q^-1 ascending, ARX `a` without its leading 1) are stated
 * once in `./types`.
 */
export * from "./types";
export * from "./errors";
export * from "./poly";
export * from "./roots";
export * from "./root-bounds";
export * from "./jury";
export * from "./zplane";
export * from "./discretize";
export * from "./closed-loop";
export * from "./sampling";
export * from "./rls";
export * from "./arx";
export * from "./arx-batch";
export * from "./excitation";
export * from "./confidence";
export * from "./forecast";
export * from "./residence-time";
export * from "./riv";
export * from "./lag-vector";
