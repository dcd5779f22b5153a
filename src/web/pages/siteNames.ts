import type { SiteConfig } from '../../config/schema.js';
import { decoderLinkOf, type DecoderLink } from '../../model/decoderLink.js';
import { contactNames, type ContactNames } from './auditWords.js';

/**
 * The names people gave things in the config, for pages: a decoder by its `name` (its id only when it
 * has none), how it is linked, and contacts by id or address. Pages never show a bare id when a name exists.
 */
export interface SiteNames {
  decoder(id: string): string;
  link(decoderId: string): DecoderLink | null;
  contacts: ContactNames;
}

export function siteNamesFrom(config: Pick<SiteConfig, 'decoders' | 'contacts'>): SiteNames {
  const decoders = new Map(config.decoders.map((d) => [d.id, d]));
  return {
    decoder: (id) => decoders.get(id)?.name ?? `decoder ${id}`,
    link: (id) => {
      const decoder = decoders.get(id);
      return decoder ? decoderLinkOf(decoder.port) : null;
    },
    contacts: contactNames(config.contacts),
  };
}

/** Where an alarm is: its loop's name, the decoder's name, or the monitor itself. */
export function sourceLabel(alarm: { loopName?: string | null; source: string }, names: SiteNames): string {
  if (alarm.loopName) return alarm.loopName;
  return alarm.source === 'system' ? 'The monitor' : names.decoder(alarm.source);
}
