/** MQTT topic filter matching (MQTT 3.1.1 §4.7: '+' one level, '#' the rest, last level only). */
export function topicMatches(filter: string, topic: string): boolean {
  if (filter === topic) return true;
  const f = filter.split("/");
  const t = topic.split("/");
  for (let i = 0; i < f.length; i++) {
    const level = f[i];
    if (level === "#") return i === f.length - 1;
    if (i >= t.length) return false;
    if (level !== "+" && level !== t[i]) return false;
  }
  return f.length === t.length;
}
