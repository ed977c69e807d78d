import nextEnv from "@next/env";

/** Load `.env*` files the way Next does, before `getConfig()` is first called. */
export function loadEnv(dir: string = process.cwd(), dev = process.env.NODE_ENV !== "production"): void {
  nextEnv.loadEnvConfig(dir, dev);
}
