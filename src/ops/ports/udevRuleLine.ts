/**
 * The udev rule that gives one USB serial adapter a stable name, /dev/pairwatch-decoder-<name>.
 * deploy/99-pairwatch-decoder.rules.in holds the same line with placeholders; a test keeps the two equal.
 *
 * Matching by vendor, product and serial number (rather than by ttyACM0/ttyUSB0, whose numbers depend
 * on the order devices appear) is the usual way to pin a name on a USB serial adapter (common practice).
 */
export interface UdevRuleFields {
  /** 4 hex digits, as udev shows ATTRS{idVendor}. */
  vendorId: string;
  productId: string;
  serialNumber: string;
  /** Becomes /dev/pairwatch-decoder-<name>; the decoder's id in the config is a good choice. */
  name: string;
}

export const UDEV_LINK_PREFIX = 'pairwatch-decoder-';

const HEX4 = /^[0-9a-f]{4}$/;
/** Characters udev compares literally. `*`, `?`, `[`, `|` are patterns in udev matches; `"` ends the value. */
const SAFE_SERIAL = /^[A-Za-z0-9._:+ -]{1,64}$/;
const SAFE_NAME = /^[a-z0-9][a-z0-9_-]{0,39}$/;

export type UdevRuleOutcome = { ok: true; line: string } | { ok: false; reason: string };

export function udevRuleLine(fields: UdevRuleFields): UdevRuleOutcome {
  const vendorId = fields.vendorId.toLowerCase();
  const productId = fields.productId.toLowerCase();
  if (!HEX4.test(vendorId)) return { ok: false, reason: `vendor id "${fields.vendorId}" is not 4 hex digits` };
  if (!HEX4.test(productId)) return { ok: false, reason: `product id "${fields.productId}" is not 4 hex digits` };
  if (!SAFE_SERIAL.test(fields.serialNumber)) {
    return { ok: false, reason: `serial number "${fields.serialNumber}" has characters udev would read as a pattern` };
  }
  if (!SAFE_NAME.test(fields.name)) return { ok: false, reason: `name "${fields.name}" must be lower-case letters, digits, "-" or "_"` };
  return {
    ok: true,
    line: renderRule({ vendorId, productId, serialNumber: fields.serialNumber, name: fields.name }),
  };
}

/** The rule text with no checks; also used with placeholders to build the template. */
export function renderRule(fields: UdevRuleFields): string {
  return (
    `SUBSYSTEM=="tty", ATTRS{idVendor}=="${fields.vendorId}", ATTRS{idProduct}=="${fields.productId}", ` +
    `ATTRS{serial}=="${fields.serialNumber}", SYMLINK+="${UDEV_LINK_PREFIX}${fields.name}", ` +
    `GROUP="dialout", MODE="0660", TAG+="systemd", ENV{SYSTEMD_WANTS}+="pairwatch.service"`
  );
}

/** A name for /dev/pairwatch-decoder-<name> made from a serial number: lower case, safe characters only. */
export function nameFromSerial(serialNumber: string): string {
  const cleaned = serialNumber
    .toLowerCase()
    .replace(/[^a-z0-9_-]+/g, '-')
    .replace(/^[-_]+|-+$/g, '')
    .slice(0, 40);
  return cleaned || 'decoder';
}
