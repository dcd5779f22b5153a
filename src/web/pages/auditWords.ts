import type { AuditAction } from '../../alarms/alarmTypes.js';
import { BACK_TO_NORMAL_NEEDS_ACK } from '../../model/alarmStanding.js';
import { siteTime } from './siteTime.js';

/**
 * An audit row in people's words, for the alarm page's trail and the history page: "raised",
 * "mailed Farm office", "step 2: told On-call phone" — never the action's code, a contact id, a mail
 * server's reply or the path of a drop-folder file. The monitor writes its own notes (what it did and
 * why, for the record and the API); those are read here, not shown. A person's note is shown, quoted.
 */

/** Who a contact id or mail address belongs to, from the config. */
export type ContactNames = ReadonlyMap<string, string>;

export interface AuditRow {
  action: AuditAction;
  actor: string;
  note: string | null;
}

export interface AuditWords {
  what: string;
  /** The person who acted; null when the monitor did it by itself. */
  who: string | null;
  /** A person's own words, to be shown quoted. */
  said: string | null;
}

const MONITOR_ACTORS = new Set(['system', 'monitor']);

function namesOf(list: string, contacts: ContactNames): string {
  const names = list
    .split(',')
    .map((part) => part.trim())
    .filter((part) => part !== '')
    .map((part) => /<([^>]+)>/.exec(part)?.[1] ?? part)
    .map((part) => contacts.get(part) ?? contacts.get(part.toLowerCase()) ?? part);
  return names.length > 0 ? [...new Set(names)].join(', ') : 'nobody';
}

/** "reason (until 2026-12-01T20:00:00.000Z)" as the engine writes a shelve note. */
function splitShelveNote(note: string): { reason: string; untilMs: number | null } {
  const match = /^(.*) \(until (\d{4}-\d{2}-\d{2}T[\d:.]+Z)\)$/s.exec(note);
  if (!match) return { reason: note, untilMs: null };
  const untilMs = Date.parse(match[2]!);
  return { reason: match[1]!, untilMs: Number.isNaN(untilMs) ? null : untilMs };
}

export function auditWords(row: AuditRow, contacts: ContactNames, timeZone: string, now: number): AuditWords {
  const who = MONITOR_ACTORS.has(row.actor) ? null : row.actor;
  const note = row.note ?? '';
  const person = (what: string): AuditWords => ({ what, who, said: row.note && row.note.trim() ? row.note : null });
  const monitor = (what: string): AuditWords => ({ what, who, said: null });
  switch (row.action) {
    case 'raise':
      if (note.includes('while the loop is out of service')) return monitor('not raised: the loop is out of service');
      if (note.startsWith('condition present again')) return monitor('present again');
      return monitor('raised');
    case 'clear':
      if (note.includes('latched') || note.includes('before anyone acknowledged')) return monitor(BACK_TO_NORMAL_NEEDS_ACK);
      if (note.includes('while')) return monitor('back to normal while hidden');
      return monitor('back to normal');
    case 'acknowledge':
      return person('acknowledged');
    case 'shelve': {
      const { reason, untilMs } = splitShelveNote(note);
      const until = untilMs === null ? '' : ` until ${siteTime(untilMs, timeZone, now)}`;
      return { what: `shelved${until}`, who, said: reason.trim() ? reason : null };
    }
    case 'unshelve':
      return monitor('unshelved');
    case 'shelve-expired':
      return monitor('back from shelving: the time was up');
    case 'out-of-service':
      return person('loop taken out of service');
    case 'return-to-service':
      return person('loop back in service');
    case 'escalation-step': {
      // "step 2 of 3: oncall, vet"
      const match = /^step (\d+) of \d+: (.*)$/s.exec(note);
      return monitor(match ? `step ${match[1]}: told ${namesOf(match[2]!, contacts)}` : 'escalated');
    }
    case 'repeat': {
      // "repeat 3 of 10: office, oncall" with an optional note of how many missed repeats it covers.
      const match = /^repeat (\d+) of \d+: ([^(]*)/s.exec(note);
      return monitor(match ? `reminder ${match[1]}: told ${namesOf(match[2]!, contacts)}` : 'reminder sent');
    }
    case 'mail-sent': {
      // "<subject> → <addresses or contact id> (<server reply or file written>)"
      const arrow = note.lastIndexOf(' → ');
      if (arrow < 0) return monitor('mailed');
      const rest = note.slice(arrow + 3);
      const paren = rest.indexOf(' (');
      return monitor(`mailed ${namesOf(paren < 0 ? rest : rest.slice(0, paren), contacts)}`);
    }
    case 'mail-failed': {
      const contact = /^not sent: contact "([^"]*)"/.exec(note);
      if (contact) return monitor(`mail not sent: ${contact[1]} is no longer a contact`);
      const attempt = /attempt (\d+) failed/.exec(note);
      const next = /next try (\d{4}-\d{2}-\d{2}T[\d:.]+Z)/.exec(note);
      const nextMs = next ? Date.parse(next[1]!) : Number.NaN;
      const again = Number.isNaN(nextMs) ? '' : `; trying again at ${siteTime(nextMs, timeZone, now)}`;
      return monitor(`mail not delivered${attempt ? ` (attempt ${attempt[1]})` : ''}${again}`);
    }
    case 'mail-dropped':
      // "<subject>: not sent: a reminder made obsolete, alarm 7 acknowledged before it could go"
      return monitor('reminder not mailed: no longer needed');
    case 'close':
      return monitor('closed');
    case 'mail-reply': {
      // "reply <message key> from <address>; <sender check summary>"
      const from = /from (\S+?);/.exec(note);
      return monitor(from ? `reply by mail from ${namesOf(from[1]!, contacts)}` : 'reply by mail');
    }
  }
}

/** The contact names a page needs: by id and by mail address (mail rows record addresses). */
export function contactNames(contacts: ReadonlyArray<{ id: string; name: string; email: string }>): ContactNames {
  const names = new Map<string, string>();
  for (const c of contacts) {
    names.set(c.id, c.name);
    names.set(c.email.toLowerCase(), c.name);
  }
  return names;
}
