/**
 * Sparkplug B topics (Sparkplug 3.0 §4.1): spBv1.0/<group_id>/<message_type>/<edge_node_id>[/<device_id>],
 * and the host application's spBv1.0/STATE/<host_id>. Ids are UTF-8 without '+', '#' or '/' in
 * the specification; Rimguard takes letters, digits and `._:-`, 1 to 64 characters, so an id is
 * also a safe key in the database and in the admin's form.
 */
import { isSparkplugId } from "@/lib/domain/sparkplug";

export const SPARKPLUG_NAMESPACE = "spBv1.0";
export const SPARKPLUG_WILDCARD = `${SPARKPLUG_NAMESPACE}/#`;

export const NODE_MESSAGES = ["NBIRTH", "NDEATH", "NDATA", "NCMD"] as const;
export const DEVICE_MESSAGES = ["DBIRTH", "DDEATH", "DDATA", "DCMD"] as const;
export type SparkplugMessageType = (typeof NODE_MESSAGES)[number] | (typeof DEVICE_MESSAGES)[number];

export interface SparkplugTopic {
  groupId: string;
  type: SparkplugMessageType;
  edgeNode: string;
  /** '' for the edge node's own messages. */
  device: string;
}


export function isSparkplugTopic(topic: string): boolean {
  return topic.startsWith(`${SPARKPLUG_NAMESPACE}/`);
}

/** The host application's STATE topic (retained by its publisher; Rimguard does not publish one). */
export function isStateTopic(topic: string): boolean {
  return topic.startsWith(`${SPARKPLUG_NAMESPACE}/STATE/`);
}

/** Parse an edge node or device topic; null for anything else (STATE, wrong depth, bad id). */
export function parseSparkplugTopic(topic: string): SparkplugTopic | null {
  const parts = topic.split("/");
  if (parts[0] !== SPARKPLUG_NAMESPACE || parts.length < 4 || parts.length > 5) return null;
  const [, groupId, type, edgeNode, device = ""] = parts as [string, string, string, string, string?];
  if (!isSparkplugId(groupId) || !isSparkplugId(edgeNode)) return null;
  const isNode = (NODE_MESSAGES as readonly string[]).includes(type);
  const isDevice = (DEVICE_MESSAGES as readonly string[]).includes(type);
  if (isNode && parts.length !== 4) return null;
  if (isDevice && (parts.length !== 5 || !isSparkplugId(device))) return null;
  if (!isNode && !isDevice) return null;
  return { groupId, type: type as SparkplugMessageType, edgeNode, device };
}

export function sparkplugTopic(t: SparkplugTopic): string {
  const base = `${SPARKPLUG_NAMESPACE}/${t.groupId}/${t.type}/${t.edgeNode}`;
  return t.device ? `${base}/${t.device}` : base;
}

/** Only the group id of a topic (the tenant binding is by group). */
export function groupOfTopic(topic: string): string | null {
  const parts = topic.split("/");
  return parts[0] === SPARKPLUG_NAMESPACE && parts[1] !== undefined && parts[1] !== "STATE" ? parts[1] : null;
}
