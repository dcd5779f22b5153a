/** Loop current bands as reported by the decoder: below open threshold, standby, above high threshold. */
export const BANDS = ['O', 'N', 'H'] as const;
export type Band = (typeof BANDS)[number];

export function isBand(value: string): value is Band {
  return value === 'O' || value === 'N' || value === 'H';
}
