/**
 * How lib/ and route handlers reach the object store: through the running server context
 * (lib/data/server-context.ts), never by importing server/ code. server/objectstore implements
 * `ObjectStoreApi` (lib/domain/services.ts).
 */
import { HttpError } from "@/lib/domain/errors";
import type { ObjectStoreApi } from "@/lib/domain/services";
import { runningService } from "@/lib/data/server-context";

export type { ObjectStoreApi as ObjectStore } from "@/lib/domain/services";


/** The running object store, or a 503 when this process runs without it. */
export function objectStore(): ObjectStoreApi {
  const svc = runningService("objectstore");
  if (!svc || typeof svc.put !== "function") throw new HttpError(503, "The object store is not running.");
  return svc;
}
