/** What a request asks a telescope for: a light curve, colours, or a spectrum. */
export type RequestKind = 'photometry' | 'colours' | 'spectrum';

/** Every request kind, in the order planning considers them. */
export const REQUEST_KINDS: readonly RequestKind[] = ['photometry', 'colours', 'spectrum'];
