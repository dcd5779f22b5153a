/**
 * The topic layout, one function per topic, so publisher, estate, README and ACL agree.
 * Everything a site publishes lives under `<prefix>/<site_id>/`, which is what lets a broker ACL keep
 * each site to its own subtree (`pattern write pairwatch/%u/#`).
 */
export const TOPIC_KINDS = ['status', 'heartbeat', 'summary', 'loop', 'decoder', 'event', 'alarms', 'command', 'reply'] as const;
export type TopicKind = (typeof TOPIC_KINDS)[number];

export function siteTopics(prefix: string, siteId: string) {
  const base = `${prefix}/${siteId}`;
  return {
    base,
    status: `${base}/status`,
    heartbeat: `${base}/heartbeat`,
    summary: `${base}/summary`,
    loop: (loopId: string) => `${base}/loops/${loopId}`,
    decoder: (decoderId: string) => `${base}/decoders/${decoderId}`,
    events: `${base}/events`,
    alarms: `${base}/alarms`,
    commands: `${base}/commands`,
    /** Where a requester may ask for answers: inside the site's subtree, so the site may write there. */
    replies: `${base}/replies`,
  };
}

/** Splits a topic back into site and kind; null for anything outside the layout. */
export function parseSiteTopic(prefix: string, topic: string): { siteId: string; kind: TopicKind; key: string | null } | null {
  if (!topic.startsWith(`${prefix}/`)) return null;
  const rest = topic.slice(prefix.length + 1).split('/');
  const [siteId, first, second] = rest;
  if (!siteId || !first) return null;
  if (rest.length === 2) {
    const single = { status: 'status', heartbeat: 'heartbeat', summary: 'summary', events: 'event', alarms: 'alarms', commands: 'command' } as const;
    const kind = single[first as keyof typeof single];
    return kind ? { siteId, kind, key: null } : null;
  }
  if (rest.length === 3 && second) {
    if (first === 'loops') return { siteId, kind: 'loop', key: second };
    if (first === 'decoders') return { siteId, kind: 'decoder', key: second };
    if (first === 'replies') return { siteId, kind: 'reply', key: second };
  }
  return null;
}
