import { readdirSync, readFileSync, statSync } from 'node:fs';
import { dirname, join, relative, resolve, sep } from 'node:path';
import { describe, expect, it } from 'vitest';

/**
 * The layering DEVELOPERS.md states, checked against every import in src/: a folder may import from
 * its own line of the `layers` block or from an earlier line, never from a later one. The order is read
 * from DEVELOPERS.md itself, so the document and the check cannot drift apart.
 */
const ROOT = resolve(import.meta.dirname, '..');
const SRC = join(ROOT, 'src');

function layersFromGuide(): Map<string, number> {
  const guide = readFileSync(join(ROOT, 'DEVELOPERS.md'), 'utf8');
  const block = /```layers\n([\s\S]*?)```/.exec(guide);
  if (!block) throw new Error('DEVELOPERS.md has no ```layers block');
  const rank = new Map<string, number>();
  block[1]!.trim().split('\n').forEach((line, i) => {
    for (const folder of line.trim().split(/\s+/)) rank.set(folder, i);
  });
  return rank;
}

function sourceFiles(dir: string): string[] {
  return readdirSync(dir).flatMap((name) => {
    const path = join(dir, name);
    if (statSync(path).isDirectory()) return sourceFiles(path);
    return path.endsWith('.ts') ? [path] : [];
  });
}

const topFolder = (path: string) => relative(SRC, path).split(sep)[0]!;

describe('imports run one way (DEVELOPERS.md, "Data flows one way")', () => {
  const rank = layersFromGuide();

  it('names every folder under src/ in the layers block', () => {
    const folders = readdirSync(SRC).filter((name) => statSync(join(SRC, name)).isDirectory());
    expect(folders.filter((f) => !rank.has(f))).toEqual([]);
  });

  it('has no import from a later layer', () => {
    const upward: string[] = [];
    for (const file of sourceFiles(SRC)) {
      const from = topFolder(file);
      const text = readFileSync(file, 'utf8');
      for (const match of text.matchAll(/(?:from|import\()\s*'(\.{1,2}\/[^']+)'/g)) {
        const target = resolve(dirname(file), match[1]!);
        if (!target.startsWith(SRC + sep)) continue;
        const to = topFolder(target);
        if (to !== from && (rank.get(to) ?? Infinity) > (rank.get(from) ?? -Infinity)) upward.push(`${relative(ROOT, file)} → src/${to}`);
      }
    }
    expect(upward).toEqual([]);
  });

  it('would catch one: a store file importing from notify is a later layer', () => {
    expect(rank.get('notify')!).toBeGreaterThan(rank.get('store')!);
    expect(rank.get('model')).toBe(0);
  });
});
