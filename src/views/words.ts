import { num } from './markup.js';

/** Words the pages and pictures share. */

/** A request kind as the astronomer says it. */
export const KIND_WORDS: Readonly<Record<string, string>> = { photometry: 'light curve', colours: 'colours', spectrum: 'spectrum' };

/** A duration in seconds as "38 min" (under 90 min) or "1.6 h". */
export function durationWords(s: number): string {
  return s >= 5400 ? `${num(s / 3600, 1)} h` : `${Math.max(1, Math.round(s / 60))} min`;
}
