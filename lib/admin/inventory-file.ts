/**
 * The text of a chosen inventory file (browser and server): UTF-8 or UTF-16 as spreadsheet
 * programs save "CSV" and "Unicode text", the byte order mark dropped (lib/csv/encoding.ts).
 */
import { decodeText } from "@/lib/csv";

export async function inventoryFileText(file: Blob): Promise<string> {
  return decodeText(new Uint8Array(await file.arrayBuffer()));
}
