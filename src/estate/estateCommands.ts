import { randomBytes } from 'node:crypto';
import type { IPublishPacket, MqttClient } from 'mqtt';
import { TOKEN_PROPERTY } from '../mqtt/siteCommands.js';
import type { CommandPayload, ReplyPayload } from '../mqtt/sitePayloads.js';
import { siteTopics } from '../mqtt/siteTopics.js';

/**
 * Acting from the estate: an acknowledgement goes to the site's command topic with the site's own
 * API token (MQTT 5 user property), a response topic under the site's `replies/` (the ACL lets the
 * site write there and the estate read it) and fresh correlation data; the site's answer settles it.
 * The site decides, with the REST API's rules; the estate only carries the request.
 */
export type CommandOutcome = { ok: true } | { ok: false; code: string; message: string };

export interface EstateCommander {
  acknowledge(siteId: string, alarmId: number, note: string | null, token: string): Promise<CommandOutcome>;
  /** Hand every message here; true when it was an answer this commander was waiting for. */
  onMessage(topic: string, packet: IPublishPacket): boolean;
  /** Refuses whatever still waits (the estate is stopping). */
  close(): void;
}

export function createEstateCommander(client: MqttClient, prefix: string, clientId: string, timeoutMs: number): EstateCommander {
  const waiting = new Map<string, { siteId: string; settle: (outcome: CommandOutcome) => void }>();
  const replyLevel = clientId.replace(/[^A-Za-z0-9_-]/g, '_');
  return {
    acknowledge(siteId, alarmId, note, token) {
      const topics = siteTopics(prefix, siteId);
      const correlation = randomBytes(12).toString('hex');
      const command: CommandPayload = { action: 'acknowledge', alarmId, ...(note ? { note } : {}) };
      return new Promise<CommandOutcome>((resolve) => {
        const timer = setTimeout(() => {
          waiting.delete(correlation);
          resolve({ ok: false, code: 'PW_ESTATE_NO_ANSWER', message: `no answer from the site within ${Math.round(timeoutMs / 1000)} s; check that it is reporting and has mqtt.accept_commands: true` });
        }, timeoutMs);
        waiting.set(correlation, {
          siteId,
          settle: (outcome) => {
            clearTimeout(timer);
            waiting.delete(correlation);
            resolve(outcome);
          },
        });
        client
          .publishAsync(topics.commands, JSON.stringify(command), {
            qos: 1,
            properties: { responseTopic: `${topics.replies}/${replyLevel}`, correlationData: Buffer.from(correlation), userProperties: { [TOKEN_PROPERTY]: token }, contentType: 'application/json' },
          })
          .catch((err: unknown) => waiting.get(correlation)?.settle({ ok: false, code: 'PW_ESTATE_NOT_SENT', message: `the broker did not take the command: ${(err as Error).message}` }));
      });
    },
    onMessage(topic, packet) {
      const correlation = packet.properties?.correlationData?.toString();
      const entry = correlation === undefined ? undefined : waiting.get(correlation);
      // Only the asked site's own replies topic may answer: another site cannot settle it.
      if (!entry || topic !== `${siteTopics(prefix, entry.siteId).replies}/${replyLevel}`) return false;
      let reply: ReplyPayload;
      try {
        reply = JSON.parse(packet.payload.toString()) as ReplyPayload;
      } catch {
        entry.settle({ ok: false, code: 'PW_ESTATE_BAD_ANSWER', message: 'the site answered with something that is not JSON' });
        return true;
      }
      entry.settle(reply.ok ? { ok: true } : { ok: false, code: reply.code ?? 'PW_ESTATE_REFUSED', message: reply.message ?? 'refused' });
      return true;
    },
    close() {
      for (const entry of [...waiting.values()]) entry.settle({ ok: false, code: 'PW_ESTATE_STOPPING', message: 'the estate board is stopping' });
    },
  };
}
