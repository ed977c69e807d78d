"use client";
/**
 * What a console page shows when its server side failed. In production Next hides the error's
 * message from the browser (only a digest reaches it), so this says what is most likely and what
 * still works, and never shows a server message (which could name an internal address). During a
 * database outage the server answers most pages with its own 503 page (server/db-gate.ts); this
 * covers the moment before the outage is noticed.
 */
import Link from "next/link";

export default function ConsoleError({ error, reset }: { error: Error & { digest?: string }; reset: () => void }) {
  return (
    <div role="alert" className="flex max-w-prose flex-col gap-3">
      <h1 className="text-xl font-semibold">This page could not be loaded</h1>
      <p>
        The server could not prepare this page. If the database is unavailable, the alarm list still works: alarms can be
        acknowledged and shelved, and what you do is recorded and written to the database when it is back.
      </p>
      <div className="flex gap-3">
        <button type="button" onClick={reset} className="rounded border border-line px-3 py-1">
          Try again
        </button>
        <Link href="/alarms" className="underline">
          Open the alarm list
        </Link>
      </div>
      {error.digest && <p className="text-xs text-muted">Reference for the administrator: {error.digest}</p>}
    </div>
  );
}
