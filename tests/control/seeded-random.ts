/** Moved to tests/helpers/seeded-random.ts; kept for the bench that still imports it from here. */
export { mulberry32, normal } from "../helpers/seeded-random";
