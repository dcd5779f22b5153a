import { CONDITION_TEXT, type Condition } from './condition.js';

/**
 * How a decoder reaches the monitor, read from its configured `port`: a USB serial device, a
 * serial-to-network box (`tcp://host:port`) or the built-in simulator (`sim:FILE`). The advice on
 * what to check when a decoder goes quiet or garbles its frames depends on it: a USB cable is no use
 * to look at for a decoder on the network.
 */
export const DECODER_LINKS = ['serial', 'network', 'simulated'] as const;
export type DecoderLink = (typeof DECODER_LINKS)[number];

export function decoderLinkOf(port: string): DecoderLink {
  if (port.startsWith('tcp://')) return 'network';
  if (port.startsWith('sim:')) return 'simulated';
  return 'serial';
}

/** What to check, per link, for the conditions that are about the link itself. */
const LINK_CHECK = {
  offline: {
    serial: 'Check the decoder USB cable and power at the main building; every loop on it is blind meanwhile.',
    network:
      'Check the network path to the decoder (its serial-to-network box is powered, on the network and at the address in the config) and the decoder power; every loop on it is blind meanwhile.',
    simulated: 'The simulated decoder has stopped: check that its scenario file is still there and restart the monitor.',
  },
  'link-noisy': {
    serial: 'Check the USB cable and its routing away from mains and motor cables; try another port.',
    network:
      'Check the network between the monitor and the serial-to-network box (cabling, Wi-Fi signal, a busy switch) and the serial cable from the box to the decoder.',
    simulated: 'The simulated decoder was told to garble its frames; see its scenario file.',
  },
} as const satisfies Partial<Record<Condition, Record<DecoderLink, string>>>;

/** What to check on site for a condition; `link` is the decoder's link when the alarm is about one. */
export function checkAdvice(condition: Condition, link: DecoderLink | null): string {
  if (link !== null && (condition === 'offline' || condition === 'link-noisy')) return LINK_CHECK[condition][link];
  return CONDITION_TEXT[condition].check;
}
