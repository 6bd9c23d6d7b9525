import { z } from 'zod';

/**
 * A notice's orbit block as intake takes it, the store keeps it and estimation
 * uses it: heliocentric ecliptic J2000 elements, the epoch and the time of
 * perihelion as ISO-8601 TT, angles in degrees, q in au; H and G when given.
 */
export interface OrbitBlock {
  readonly epoch: string;
  readonly q: number;
  readonly e: number;
  readonly i: number;
  readonly node: number;
  readonly peri: number;
  readonly tp: string;
  readonly H?: number | undefined;
  readonly G?: number | undefined;
}

const time = z.string().refine((s) => Number.isFinite(Date.parse(s)), 'expected an ISO-8601 time');

/**
 * The stored block's shape: finite numbers and readable times. The notice
 * schema (src/intake/notice.ts) holds the full rules a sender must meet; this
 * checks that what comes back from storage is still an orbit block.
 */
const storedOrbitBlock = z
  .object({
    epoch: time,
    q: z.number(),
    e: z.number(),
    i: z.number(),
    node: z.number(),
    peri: z.number(),
    tp: time,
    H: z.number().optional(),
    G: z.number().optional(),
  })
  .strict();

/** Reads back a stored orbit block (JSON text): the block, or what is wrong with it, naming the field. */
export function orbitBlockFromJson(json: string): { ok: true; block: OrbitBlock } | { ok: false; message: string } {
  let value: unknown;
  try {
    value = JSON.parse(json);
  } catch {
    return { ok: false, message: 'the orbit block is not JSON' };
  }
  const parsed = storedOrbitBlock.safeParse(value);
  if (parsed.success) return { ok: true, block: parsed.data };
  const issues = parsed.error.issues.map((i) => `${i.path.length > 0 ? i.path.join('.') : '(block)'}: ${i.message}`);
  return { ok: false, message: `the orbit block does not fit its format (${issues.join('; ')})` };
}
