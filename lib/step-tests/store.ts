/**
 * How lib/ and route handlers reach the object store: through the running server context
 * (lib/data/server-context.ts), never by importing server/ code. server/objectstore implements
 * `ObjectStoreApi` (lib/domain/services.ts).
 */
import { HttpError, NotFoundError } from "@/lib/domain/errors";
import type { ObjectStoreApi } from "@/lib/domain/services";
import { runningService } from "@/lib/data/server-context";

export type { ObjectStoreApi as ObjectStore } from "@/lib/domain/services";


/** The running object store, or a 503 when this process runs without it. */
export function objectStore(): ObjectStoreApi {
  const svc = runningService("objectstore");
  if (!svc || typeof svc.put !== "function") throw new HttpError(503, "The object store is not running.");
  return svc;
}

/**
 * An uploaded file back from the object store, byte for byte: 404 (naming `what`) when the object
 * is gone, 503 when the store cannot be read. Step tests and assessed exports read their files so.
 */
export async function readStoredFile(store: ObjectStoreApi, key: string, what: string): Promise<Buffer> {
  let bytes: Buffer | null;
  try {
    bytes = await store.get(key);
  } catch (e) {
    const name = (e as { name?: string }).name;
    if (name === "NoSuchKey" || name === "NotFound") throw new NotFoundError(what);
    console.error(`[objectstore] reading ${what} failed`, e);
    throw new HttpError(503, "The file could not be read from the object store. Try again later.");
  }
  if (!bytes) throw new NotFoundError(what);
  return bytes;
}
