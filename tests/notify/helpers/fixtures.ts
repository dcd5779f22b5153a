import type { NoticeSettings } from '../../../src/notify/noticeSettings.js';

/** Demo-style site of our own invention: a smallholding with a well pit and two sheds. */
export const SITE_NAME = 'Ridgeway Farm';

export const contacts = [
  { id: 'office', name: 'Farm office', email: 'office@ridgeway.example' },
  { id: 'oncall', name: 'On-call phone', email: 'oncall@ridgeway.example' },
  { id: 'vet', name: 'Neighbour "Sam"', email: 'sam@ridgeway.example' },
];

export const loops = [
  { id: 'well', name: 'Well pit', location: 'Pump house, north paddock' },
  { id: 'lambing', name: 'Lambing shed', location: 'East yard' },
  { id: 'tack', name: 'Tack room <east>', location: null },
  ...Array.from({ length: 8 }, (_, i) => ({ id: `bay${i + 1}`, name: `Hay bay ${i + 1}`, location: 'Long barn' })),
];

export const secret = Buffer.alloc(32, 0x5a);

/** Deterministic ids: the same sequence every run. */
export function counter(prefix: string): () => string {
  let n = 0;
  return () => `${prefix}${String(++n).padStart(4, '0')}`;
}

// One sequence for the whole test file: Message-IDs must stay unique however many settings objects a test makes.
const messageIds = counter('');

export function settings(overrides: Partial<NoticeSettings> = {}): NoticeSettings {
  return {
    siteName: SITE_NAME,
    timeZone: 'Europe/London',
    from: 'pairwatch <monitor@ridgeway.example>',
    publicUrl: 'https://monitor.ridgeway.example',
    contacts,
    loops,
    decoders: [{ id: 'main', name: 'Office decoder' }],
    ack: { secret, ttlMs: 7 * 86_400_000, newTokenId: counter('tok_test_') },
    newMessageId: () => `<msg-${messageIds()}@pairwatch.ridgeway.example>`,
    ...overrides,
  };
}
