import { spawnSync } from 'node:child_process';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { renderRule, udevRuleLine } from '../../src/ops/ports/udevRuleLine.js';
import { useTempDirs } from '../helpers/tempDir.js';

const tempDir = useTempDirs();

const TEMPLATE = join(import.meta.dirname, '../../deploy/99-pairwatch-decoder.rules.in');
const PLACEHOLDERS = { vendorId: '@VENDOR_ID@', productId: '@PRODUCT_ID@', serialNumber: '@SERIAL@', name: '@NAME@' };

/**
 * Keys and operators of udev rules as udev(7) lists them ("Rules files"): match keys take == or !=,
 * assignment keys =, +=, -= or :=; keys with {attr} take an attribute or variable name.
 */
const MATCH_KEYS = new Set(['ACTION', 'DEVPATH', 'KERNEL', 'KERNELS', 'NAME', 'SYMLINK', 'SUBSYSTEM', 'SUBSYSTEMS', 'DRIVER', 'DRIVERS', 'ATTR', 'ATTRS', 'SYSCTL', 'ENV', 'CONST', 'TAG', 'TAGS', 'TEST', 'PROGRAM', 'RESULT']);
const ASSIGN_KEYS = new Set(['NAME', 'SYMLINK', 'OWNER', 'GROUP', 'MODE', 'SECLABEL', 'ATTR', 'SYSCTL', 'ENV', 'TAG', 'RUN', 'LABEL', 'GOTO', 'IMPORT', 'OPTIONS']);
const WITH_NAME = new Set(['ATTR', 'ATTRS', 'SYSCTL', 'ENV', 'CONST', 'TEST', 'SECLABEL', 'RUN', 'IMPORT']);
const PAIR = /^([A-Z_]+)(?:\{([A-Za-z0-9_.\/-]+)\})?(==|!=|\+=|-=|:=|=)"((?:[^"\\]|\\.)*)"$/;

function udevSyntaxProblems(text: string): string[] {
  const problems: string[] = [];
  text.split('\n').forEach((line, index) => {
    if (line.trim() === '' || line.trimStart().startsWith('#')) return;
    for (const pair of line.split(/,\s*/)) {
      const m = PAIR.exec(pair.trim());
      if (!m) {
        problems.push(`line ${index + 1}: "${pair}" is not KEY=="value" or KEY="value"`);
        continue;
      }
      const [, key, attr, op] = m;
      const matching = op === '==' || op === '!=';
      if (matching ? !MATCH_KEYS.has(key!) : !ASSIGN_KEYS.has(key!)) problems.push(`line ${index + 1}: ${key} does not take ${op}`);
      if (WITH_NAME.has(key!) !== (attr !== undefined) && !(key === 'RUN' || key === 'IMPORT')) problems.push(`line ${index + 1}: ${key} ${attr ? 'takes no' : 'needs a'} {name}`);
    }
  });
  return problems;
}

function udevadmVerifyAvailable(): boolean {
  // `udevadm verify` came with systemd 253; Debian 12 has 252.
  return spawnSync('udevadm', ['verify', '--help']).status === 0;
}

describe('deploy/99-pairwatch-decoder.rules.in', () => {
  const template = readFileSync(TEMPLATE, 'utf8');
  const ruleLines = template.split('\n').filter((l) => l.trim() !== '' && !l.startsWith('#'));

  it('holds exactly the line `pairwatch ports` prints, with placeholders', () => {
    expect(ruleLines).toEqual([renderRule(PLACEHOLDERS)]);
  });

  it('filled in for an adapter, is valid udev syntax', () => {
    const filled = udevRuleLine({ vendorId: '1209', productId: '0001', serialNumber: 'PW-TEST-01', name: 'main' });
    expect(filled.ok).toBe(true);
    if (!filled.ok) return;
    expect(filled.line).toContain('SYMLINK+="pairwatch-decoder-main"');
    expect(filled.line).toContain('GROUP="dialout"');
    expect(udevSyntaxProblems(filled.line)).toEqual([]);
    expect(udevSyntaxProblems(template)).toEqual([]);
    if (udevadmVerifyAvailable()) {
      const dir = tempDir('pw-udev-');
      const file = join(dir, '99-pairwatch-decoder.rules');
      writeFileSync(file, `${filled.line}\n`);
      const result = spawnSync('udevadm', ['verify', file], { encoding: 'utf8' });
      expect(result.stderr).toBe('');
      expect(result.status).toBe(0);
    }
  });

  it('the own syntax check catches mistakes', () => {
    expect(udevSyntaxProblems('SUBSYSTEM="tty", GROUP=="dialout"')).toHaveLength(2);
    expect(udevSyntaxProblems('ATTRS=="x"')).toEqual(['line 1: ATTRS needs a {name}']);
    expect(udevSyntaxProblems('SUBSYSTEM=="tty" SYMLINK+="x"')).toHaveLength(1);
  });
});
