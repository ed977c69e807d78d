"use client";
import { useMemo, useState } from "react";
import { useDecayLevels, useLoops, useNow } from "@/lib/client/hooks";
import { WorstFirstOrder } from "@/lib/client/order";
import { summariseAreas } from "@/lib/client/areas";

/**
 * The tenant's live loops for the control room and the wall: worst first and summarised per
 * operator area, both recomputed once a second (and at once when loops or alarms change), not on
 * every live batch; within a margin step loops keep their places (no reshuffle on noise). Tiles
 * read the loop's current summary from the store, so their figures stay live between sorts.
 */
export function useWorstFirstLoops() {
  const live = useLoops();
  const { loops: raw, store } = live;
  const levels = useDecayLevels("tenant");
  const now = useNow(1000);
  const [order] = useState(() => new WorstFirstOrder());
  const tick = Math.floor(now / 1000);
  const structure = store.structureVersion;
  const count = raw.length;
  // raw is read at the moment of the tick; a new batch alone does not re-sort
  const sorted = useMemo(
    () => order.sort(raw, levels.high),
    [order, tick, structure, count, levels.high], // eslint-disable-line react-hooks/exhaustive-deps
  );
  const areas = useMemo(() => summariseAreas(raw, now), [now, structure, count]); // eslint-disable-line react-hooks/exhaustive-deps
  return { ...live, sorted, areas, levels, now };
}
