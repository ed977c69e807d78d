/**
 * How lib/ and route handlers reach the object store: through the running server context
 * (lib/server-context.ts), never by importing server/ code. server/objectstore implements this.
 */
import { HttpError } from "@/lib/domain/errors";
import { getServerContext } from "@/lib/server-context";

export interface ObjectStore {
  put(key: string, body: Uint8Array, contentType: string): Promise<void>;
  /** The object's bytes, or null when it has no body. Throws when the key does not exist. */
  get(key: string): Promise<Buffer | null>;
  delete(key: string): Promise<void>;
}

/** The running object store, or a 503 when this process runs without it. */
export function objectStore(): ObjectStore {
  const svc = getServerContext()?.services.get("objectstore") as (ObjectStore & { name: string }) | undefined;
  if (!svc || typeof svc.put !== "function") throw new HttpError(503, "The object store is not running.");
  return svc;
}
