/**
 * A copy of an object graph's state (an "image") and its restore into a freshly built object of
 * the same class, generic over the fields: whatever numbers, booleans, typed arrays, arrays and
 * nested objects the object holds are copied, without a list of fields to keep current when a
 * class changes shape (docs/architecture.md §6, "Checkpoints"). An object met a second time (a field
 * that points into an array of blocks) becomes a reference to the path of its first occurrence.
 * A restore walks the fresh object's own fields: a field missing from the image, one the fresh
 * object does not have, a typed array of another type or length, or a value of another kind is
 * an `ImageShapeError` (the image was made by another shape of the class), so a changed class
 * refuses an old image instead of resuming from half of it. It sees own enumerable properties
 * only (TypeScript `private` fields are; ECMAScript `#private` fields and closures are not, and a
 * class that keeps state there cannot be imaged).
 */

/** A typed array (the numeric state an image copies). */
export type Numeric = Float64Array | Float32Array | Int32Array | Uint32Array | Int16Array | Uint16Array | Int8Array | Uint8Array;

/** A reference to the object at `$ref` (a dotted path of keys from the image's root). */
export interface ImageRef {
  $ref: string;
}

export type Image = number | boolean | string | null | Numeric | ImageRef | Image[] | ImageObject;
export interface ImageObject {
  [key: string]: Image;
}

export class ImageShapeError extends Error {}

/** The constructors an image may hold, by name (the persisted form names them). */
export const NUMERIC_TYPES = { Float64Array, Float32Array, Int32Array, Uint32Array, Int16Array, Uint16Array, Int8Array, Uint8Array } as const;

export function isNumeric(v: unknown): v is Numeric {
  return ArrayBuffer.isView(v) && Object.values(NUMERIC_TYPES).some((C) => v instanceof C);
}

export function isRef(v: unknown): v is ImageRef {
  return typeof v === "object" && v !== null && !Array.isArray(v) && !isNumeric(v) && typeof (v as ImageRef).$ref === "string" && Object.keys(v).length === 1;
}

const join = (path: string, key: string | number) => (path === "" ? String(key) : `${path}.${key}`);

/** The state of `root`'s own fields but `skip` (top level only), copied. @throws ImageShapeError on a value it cannot copy (a function, a Map, a view into a shared buffer). */
export function takeImage(root: object, skip: readonly string[] = []): ImageObject {
  const seen = new Map<object, string>();
  const copy = (v: unknown, path: string): Image => {
    if (v === null || v === undefined) return null;
    if (typeof v === "number" || typeof v === "boolean" || typeof v === "string") return v;
    if (typeof v !== "object") throw new ImageShapeError(`${path}: cannot copy a ${typeof v}`);
    const first = seen.get(v);
    if (first !== undefined) return { $ref: first };
    seen.set(v, path);
    if (isNumeric(v)) {
      if (v.byteOffset !== 0 || v.byteLength !== v.buffer.byteLength) throw new ImageShapeError(`${path}: a view into a shared buffer`);
      return v.slice();
    }
    if (Array.isArray(v)) return v.map((e, i) => copy(e, join(path, i)));
    const proto = Object.getPrototypeOf(v) as object | null;
    if (v instanceof Map || v instanceof Set || v instanceof Date || ArrayBuffer.isView(v) || proto === null) throw new ImageShapeError(`${path}: cannot copy this object`);
    return fields(v as Record<string, unknown>, path, []);
  };
  const fields = (o: Record<string, unknown>, path: string, leave: readonly string[]): ImageObject => {
    const out: ImageObject = {};
    for (const k of Object.keys(o)) {
      if (leave.includes(k)) continue;
      if (k.startsWith("$")) throw new ImageShapeError(`${join(path, k)}: a key starting with $`);
      out[k] = copy(o[k], join(path, k));
    }
    return out;
  };
  seen.set(root, "");
  return fields(root as Record<string, unknown>, "", skip);
}

/**
 * Puts `image` into `target` (a freshly built object of the class the image was taken from), in
 * place: typed arrays are overwritten, numbers and booleans assigned, nested objects filled,
 * arrays and objects the fresh one lacks (null fields) built as plain objects.
 * @throws ImageShapeError when the image does not fit (module doc); `target` is then half filled
 * and must be discarded.
 */
export function restoreImage(target: object, image: ImageObject, skip: readonly string[] = []): void {
  const at = new Map<string, unknown>([["", target]]);
  const pending: { holder: Record<string, unknown> | unknown[]; key: string | number; path: string; ref: string }[] = [];
  const build = (img: Image, path: string, holder: Record<string, unknown> | unknown[], key: string | number): unknown => {
    if (isRef(img)) {
      pending.push({ holder, key, path, ref: img.$ref });
      return null;
    }
    if (img === null || typeof img !== "object") return img;
    if (isNumeric(img)) {
      const c = img.slice();
      at.set(path, c);
      return c;
    }
    if (Array.isArray(img)) {
      const out: unknown[] = [];
      at.set(path, out);
      img.forEach((e, i) => (out[i] = build(e, join(path, i), out, i)));
      return out;
    }
    const out: Record<string, unknown> = {};
    at.set(path, out);
    for (const k of Object.keys(img)) out[k] = build(img[k]!, join(path, k), out, k);
    return out;
  };
  const put = (cur: unknown, img: Image, path: string, holder: Record<string, unknown>, key: string): unknown => {
    if (isRef(img)) {
      pending.push({ holder, key, path, ref: img.$ref });
      return cur;
    }
    if (cur === undefined && img === null) return undefined;
    if (cur === null || cur === undefined || (img === null && typeof cur === "object")) return build(img, path, holder, key);
    if (isNumeric(cur)) {
      if (!isNumeric(img) || img.constructor !== cur.constructor || img.length !== cur.length) {
        throw new ImageShapeError(`${path}: expected a ${cur.constructor.name} of ${cur.length}`);
      }
      cur.set(img as never);
      at.set(path, cur);
      return cur;
    }
    if (typeof cur === "number" || typeof cur === "boolean" || typeof cur === "string") {
      if (typeof img !== typeof cur) throw new ImageShapeError(`${path}: expected a ${typeof cur}`);
      return img;
    }
    if (Array.isArray(cur)) {
      if (!Array.isArray(img)) throw new ImageShapeError(`${path}: expected an array`);
      return build(img, path, holder, key);
    }
    if (typeof cur === "object" && img !== null && typeof img === "object" && !Array.isArray(img) && !isNumeric(img)) {
      fill(cur as Record<string, unknown>, img, path, []);
      return cur;
    }
    throw new ImageShapeError(`${path}: expected an object`);
  };
  const fill = (o: Record<string, unknown>, img: ImageObject, path: string, leave: readonly string[]): void => {
    at.set(path, o);
    const keys = Object.keys(o).filter((k) => !leave.includes(k));
    for (const k of Object.keys(img)) if (!keys.includes(k)) throw new ImageShapeError(`${join(path, k)}: not a field of this state`);
    for (const k of keys) {
      if (!(k in img)) throw new ImageShapeError(`${join(path, k)}: missing from the image`);
      o[k] = put(o[k], img[k]!, join(path, k), o, k);
    }
  };
  fill(target as Record<string, unknown>, image, "", skip);
  for (const p of pending) {
    if (!at.has(p.ref)) throw new ImageShapeError(`${p.path}: refers to ${p.ref}, which the image does not hold`);
    (p.holder as Record<string | number, unknown>)[p.key] = at.get(p.ref);
  }
}
