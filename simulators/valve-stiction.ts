/**
 * The sticking valve of the simulators: the two-parameter model of Choudhury, Thornhill & Shah
 * (2005). It lives in lib/assessment/stiction-model.ts, where the routine-data assessment fits the
 * same model to recorded data (stiction-fit.ts); one implementation serves both.
 */
export { checkStictionParams, StictionValve, type StictionParams } from "@/lib/assessment/stiction-model";
