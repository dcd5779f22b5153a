/** "1 loop", "3 loops", "0 minutes": a count with its noun, never "loop(s)". */
export function countOf(n: number, singular: string, plural = `${singular}s`): string {
  return `${n} ${n === 1 ? singular : plural}`;
}
