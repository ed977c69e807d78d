/**
 * The one dispatch of the MQTT boundary: every message either broker takes (embedded or external)
 * goes to the in-process handlers whose pattern matches its topic (the JSON telemetry ingest, the
 * Sparkplug B decoder). A handler that throws is logged and the others still run.
 */
import { topicMatches } from "./topic-match";
import type { BrokerMessage, BrokerMessageHandler } from "./types";

export class Dispatch {
  private readonly handlers = new Set<{ pattern: string; fn: BrokerMessageHandler }>();
  /** Called when the first handler of a pattern comes and after its last one goes (external broker subscriptions). */
  constructor(private readonly onPattern?: (pattern: string, active: boolean) => void) {}

  get size(): number {
    return this.handlers.size;
  }

  add(pattern: string, fn: BrokerMessageHandler): () => void {
    const h = { pattern, fn };
    const first = ![...this.handlers].some((x) => x.pattern === pattern);
    this.handlers.add(h);
    if (first) this.onPattern?.(pattern, true);
    return () => {
      if (!this.handlers.delete(h)) return;
      if (![...this.handlers].some((x) => x.pattern === pattern)) this.onPattern?.(pattern, false);
    };
  }

  deliver(msg: BrokerMessage): void {
    for (const h of this.handlers) {
      if (!topicMatches(h.pattern, msg.topic)) continue;
      try {
        h.fn(msg);
      } catch (err) {
        console.error("[broker] message handler failed:", err);
      }
    }
  }
}
