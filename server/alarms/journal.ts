/**
 * The alarm journal: an append-only NDJSON file, one line per alarm transition, each with a
 * monotonically increasing `seq`. A line is written and fsync'd before the transition is
 * announced; the database writer then drains entries in order, and once every entry is durable in
 * MariaDB the file is truncated. On start the remaining lines are replayed (the database skips the
 * ones it already has: `alarm_events.journal_id` is unique).
 *
 * A torn last line (a crash in the middle of a write) is ignored with a warning; it was never
 * announced, because announcing happens only after the fsync returns.
 */
import fs from "node:fs";
import path from "node:path";

export type { JournalEntry, PointSnapshot } from "@/lib/domain/alarms/journal-entry";
import type { JournalEntry } from "@/lib/domain/alarms/journal-entry";

export class JournalFullError extends Error {
  constructor(readonly sizeBytes: number, readonly maxBytes: number) {
    super(`The alarm journal is full (${sizeBytes} of ${maxBytes} bytes): the database has not taken the backlog yet.`);
    this.name = "JournalFullError";
  }
}

export class AlarmJournal {
  private fd: number;
  private size: number;

  private constructor(
    readonly file: string,
    readonly maxBytes: number,
    fd: number,
    size: number,
  ) {
    this.fd = fd;
    this.size = size;
  }

  /** Open (creating the folder and file) and read the entries it still holds, in seq order. */
  static open(file: string, maxBytes: number): { journal: AlarmJournal; entries: JournalEntry[] } {
    fs.mkdirSync(path.dirname(path.resolve(file)), { recursive: true });
    const entries: JournalEntry[] = [];
    if (fs.existsSync(file)) {
      const text = fs.readFileSync(file, "utf8");
      let offset = 0;
      for (const line of text.split("\n")) {
        const lineBytes = Buffer.byteLength(line, "utf8") + 1;
        if (line.trim()) {
          try {
            const e = JSON.parse(line) as JournalEntry;
            if (typeof e.seq !== "number" || typeof e.alarmId !== "number") throw new Error("not a journal entry");
            entries.push(e);
          } catch {
            console.warn(`[alarms] journal ${file}: ignoring an unreadable line at byte ${offset} (torn write?)`);
            offset += lineBytes;
            continue;
          }
        }
        offset += lineBytes;
      }
      entries.sort((a, b) => a.seq - b.seq);
    }
    const fd = fs.openSync(file, "a+");
    const size = fs.fstatSync(fd).size;
    return { journal: new AlarmJournal(file, maxBytes, fd, size), entries };
  }

  get sizeBytes(): number {
    return this.size;
  }

  get full(): boolean {
    return this.size >= this.maxBytes;
  }

  /** Would an entry of about `bytes` still fit? */
  fits(bytes = 2048): boolean {
    return this.size + bytes <= this.maxBytes;
  }

  /**
   * Append one entry and fsync; throws JournalFullError when it would exceed the limit, unless
   * `force` (used once at shutdown, so that transitions held in memory survive a restart).
   */
  append(entry: JournalEntry, force = false): void {
    const line = JSON.stringify(entry) + "\n";
    const bytes = Buffer.byteLength(line, "utf8");
    if (!force && this.size + bytes > this.maxBytes) throw new JournalFullError(this.size, this.maxBytes);
    fs.writeSync(this.fd, line);
    fs.fsyncSync(this.fd);
    this.size += bytes;
  }

  /** Everything in the file is durable in the database: start an empty file. */
  truncate(): void {
    if (this.size === 0) return;
    fs.ftruncateSync(this.fd, 0);
    fs.fsyncSync(this.fd);
    this.size = 0;
  }

  close(): void {
    try {
      fs.closeSync(this.fd);
    } catch {
      /* already closed */
    }
  }
}
