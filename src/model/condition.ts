/**
 * Conditions an alarm can be raised for, and the priority class each belongs to.
 * The three priorities are the trade's distinction (alarm / trouble / system) and are kept apart everywhere.
 */
export const PRIORITIES = ['alarm', 'trouble', 'system'] as const;
export type Priority = (typeof PRIORITIES)[number];

export const CONDITIONS = [
  'tripped',
  'open',
  'shorted',
  'offline',
  'intermittent',
  'link-noisy',
  'decoder-fault',
  'mail-failing',
  'storage-failing',
  'inbox-failing',
  'storage-damaged',
  'broker-unreachable',
  'site-not-reporting',
] as const;
export type Condition = (typeof CONDITIONS)[number];

export const CONDITION_PRIORITY = {
  tripped: 'alarm',
  open: 'trouble',
  shorted: 'trouble',
  offline: 'trouble',
  intermittent: 'trouble',
  'link-noisy': 'trouble',
  'decoder-fault': 'trouble',
  'mail-failing': 'system',
  'storage-failing': 'system',
  'inbox-failing': 'system',
  'storage-damaged': 'system',
  'broker-unreachable': 'system',
  /** Raised by the estate board only, about a site it watches. */
  'site-not-reporting': 'trouble',
} as const satisfies Record<Condition, Priority>;

/** Sort key: alarms first, then trouble, then system. */
export const PRIORITY_RANK = { alarm: 0, trouble: 1, system: 2 } as const satisfies Record<Priority, number>;

/**
 * The short name of each condition, the one word (or two) pages, mail subjects and reports use for it;
 * a loop state that is also a condition reads the same (tripped, open circuit, short circuit).
 */
export const CONDITION_NAME = {
  tripped: 'tripped',
  open: 'open circuit',
  shorted: 'short circuit',
  offline: 'decoder offline',
  intermittent: 'intermittent',
  'link-noisy': 'noisy decoder link',
  'decoder-fault': 'decoder fault',
  'mail-failing': 'mail failing',
  'storage-failing': 'storage failing',
  'storage-damaged': 'storage damaged',
  'inbox-failing': 'reply inbox failing',
  'broker-unreachable': 'broker unreachable',
  'site-not-reporting': 'site not reporting',
} as const satisfies Record<Condition, string>;

/** Plain words for each condition, and what to check on site. Used by mail, pages and the daily report. */
export const CONDITION_TEXT = {
  tripped: {
    words: 'tripped: the remote node stopped its heartbeat (its reading crossed the threshold, or the node has no power)',
    check: 'Visit the building: check the temperature (or whatever the node watches), then the node itself.',
  },
  open: {
    words: 'open circuit: no standby current on the loop',
    check: 'Look for a cut or unplugged cable, a blown fuse at the decoder, or a node that has been removed.',
  },
  shorted: {
    words: 'short circuit: the loop draws high current continuously',
    check: 'Look for crushed or wet cable, a water-logged junction box, or a failed node.',
  },
  offline: {
    words: 'decoder offline: the line decoder has stopped talking to the monitor',
    // Without knowing the decoder's link (see decoderLink.ts for the per-link advice), name both kinds.
    check: "Check the decoder's link to the monitor (its USB cable, or the network for a tcp:// decoder) and its power; every loop on it is blind meanwhile.",
  },
  intermittent: {
    words: 'intermittent: the loop keeps dropping into fault and recovering',
    check: 'Suspect a loose terminal, corroded joint or a cable that moves in the wind; check joints and glands.',
  },
  'link-noisy': {
    words: 'noisy decoder link: many garbled or lost frames between decoder and monitor',
    check: "Check the decoder's link to the monitor: a USB cable's routing away from mains and motor cables, or the network to a tcp:// decoder.",
  },
  'decoder-fault': {
    words: 'decoder fault: the decoder reported a problem of its own (supply, overrun or watchdog restart)',
    check: 'Check the decoder power supply and the loop supply voltage.',
  },
  'mail-failing': {
    words: 'mail failing: the monitor cannot hand mail to the mail server',
    check: 'Check the internet connection and the SMTP settings (run `pairwatch mail-test`).',
  },
  'storage-failing': {
    words: 'storage failing: the monitor cannot write its database',
    check: 'Check free disk space and the data folder permissions; run `pairwatch doctor`.',
  },
  'inbox-failing': {
    words: 'reply inbox failing: the monitor cannot read the mailbox that replies to alarm mail go to, so a reply cannot acknowledge',
    check: 'Check mail.imap (host, user, the app password in pass_env) and run `pairwatch doctor`; acknowledge on the board meanwhile.',
  },
  'storage-damaged': {
    words: "storage damaged: SQLite's own check found broken pages in the monitor's database",
    check: 'Restore the newest daily backup: stop the service, `pairwatch restore <data folder>/backups/pairwatch-YYYYMMDD.db`, start it again (the log names the file).',
  },
  'broker-unreachable': {
    words: 'broker unreachable: the monitor cannot hand its states and alarm events to the MQTT broker',
    check: 'Check the network to the broker and its address, user and password (mqtt: in the config); events wait in the outbox meanwhile.',
  },
  'site-not-reporting': {
    words: 'site not reporting: the site monitor has gone offline on the broker (its Last Will) or has been silent too long, so its alarms cannot be seen from the estate',
    check: 'Check the site monitor, its power and its network link to the broker; its own pages still work on the site.',
  },
} as const satisfies Record<Condition, { words: string; check: string }>;
