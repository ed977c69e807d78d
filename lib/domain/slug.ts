/**
 * Topic slugs (docs/architecture.md §5, a contract): every topic segment is `[a-z0-9-]`. A loop's tag,
 * a site's or a tenant's name maps to its slug by: lower-case, every run of characters outside
 * [a-z0-9] becomes one '-', no '-' at either end. FIC-101 -> fic-101, "TIC 2.04/B" -> tic-2-04-b.
 */
export function slugify(text: string): string {
  return text
    .normalize("NFKD")
    .replace(/[\u0300-\u036f]/g, "")
    .toLowerCase()
    .replace(/[^a-z0-9]+/g, "-")
    .replace(/^-+|-+$/g, "");
}

/** A valid topic segment: non-empty, `[a-z0-9-]`, no leading/trailing '-' and at most 64 characters. */
export function isSlug(segment: string): boolean {
  return segment.length > 0 && segment.length <= 64 && /^[a-z0-9]+(?:-[a-z0-9]+)*$/.test(segment);
}
