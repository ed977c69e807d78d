/** The title row of a page under one loop (step tests, backfill): what the page is, the loop's tag, the way back. */
import Link from "next/link";

export function LoopSubpageTitle({ title, loopId, tag }: { title: string; loopId: number; tag: string }) {
  return (
    <div className="flex flex-wrap items-baseline gap-3">
      <h1 className="text-xl font-semibold">
        {title} · <span className="font-mono">{tag}</span>
      </h1>
      <Link href={`/loops/${loopId}`} className="text-sm text-accent underline">
        back to the loop
      </Link>
    </div>
  );
}
