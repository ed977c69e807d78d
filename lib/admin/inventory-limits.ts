/** Size limits of the loop inventory import (no imports: lib/request-guard.ts reads them too). */

/** Largest sheet accepted (a few thousand loops fit with room to spare). */
export const MAX_INVENTORY_BYTES = 2 * 1024 * 1024;
export const MAX_INVENTORY_ROWS = 5000;
/** The import's JSON body: the sheet as a string (escaping may double its quotes) plus the envelope. */
export const INVENTORY_IMPORT_BODY = { kind: "json", maxBytes: 2 * MAX_INVENTORY_BYTES + 64 * 1024 } as const;
