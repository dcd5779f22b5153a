import { existsSync } from 'node:fs';

/** `wanted` if free, else `wanted` with `.1`, `.2`, … before the extension: an earlier copy is never overwritten. */
export function uniqueSiblingPath(wanted: string): string {
  if (!existsSync(wanted)) return wanted;
  const dot = wanted.lastIndexOf('.');
  const stem = dot > 0 ? wanted.slice(0, dot) : wanted;
  const ext = dot > 0 ? wanted.slice(dot) : '';
  for (let n = 1; ; n++) {
    const candidate = `${stem}.${n}${ext}`;
    if (!existsSync(candidate)) return candidate;
  }
}
