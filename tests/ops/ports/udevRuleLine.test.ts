import { describe, expect, it } from 'vitest';
import { nameFromSerial, udevRuleLine } from '../../../src/ops/ports/udevRuleLine.js';

describe('udevRuleLine', () => {
  it('refuses values udev would read as patterns or that would break the quoting', () => {
    // udev(7): "*", "?", "[...]" and "|" are patterns in match values.
    for (const serialNumber of ['AB*', 'A?C', 'A[1]', 'A|B', 'A"B']) {
      expect(udevRuleLine({ vendorId: '1209', productId: '0001', serialNumber, name: 'main' }).ok).toBe(false);
    }
    expect(udevRuleLine({ vendorId: '12', productId: '0001', serialNumber: 'X', name: 'main' })).toEqual({ ok: false, reason: expect.stringContaining('4 hex digits') });
    expect(udevRuleLine({ vendorId: '1209', productId: '0001', serialNumber: 'X', name: 'Main Barn' }).ok).toBe(false);
  });

  it('makes safe names from serial numbers', () => {
    expect(nameFromSerial('A50285BI')).toBe('a50285bi');
    expect(nameFromSerial('  ##  ')).toBe('decoder');
    expect(nameFromSerial('ab:cd.ef')).toBe('ab-cd-ef');
  });
});
