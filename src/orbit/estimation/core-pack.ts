import { deserialize, serialize } from 'node:v8';
import type { HeliocentricState } from '../elements.js';
import type { EnsembleCore } from './estimate.js';

/**
 * An estimate's core (EnsembleCore) in compact form, for keeping many in memory
 * and for storing: the nominal and the virtual orbits as one Float64Array (x, y,
 * z in au, vx, vy, vz in au/day, heliocentric EQJ, all at `epochTt`), about
 * 48 bytes a member instead of some 190 as objects. Packing and unpacking copy
 * the numbers exactly.
 */
export interface PackedCore extends Omit<EnsembleCore, 'nominal' | 'states'> {
  /** Nominal first, then the virtual orbits: six numbers each. */
  readonly orbits: Float64Array;
}

export function packCore(core: EnsembleCore): PackedCore {
  const { nominal, states, ...rest } = core;
  const orbits = new Float64Array(6 * (states.length + 1));
  [nominal, ...states].forEach((s, i) => orbits.set([s.x, s.y, s.z, s.vx, s.vy, s.vz], 6 * i));
  return { ...rest, orbits };
}

export function unpackCore(packed: PackedCore): EnsembleCore {
  const { orbits, ...rest } = packed;
  const tt = packed.epochTt;
  const at = (i: number): HeliocentricState => ({
    tt,
    x: orbits[6 * i]!,
    y: orbits[6 * i + 1]!,
    z: orbits[6 * i + 2]!,
    vx: orbits[6 * i + 3]!,
    vy: orbits[6 * i + 4]!,
    vz: orbits[6 * i + 5]!,
  });
  const count = orbits.length / 6;
  return { ...rest, nominal: at(0), states: Array.from({ length: count - 1 }, (_, i) => at(i + 1)) };
}

/** The version written with a stored core; a stored core of another version is not read (the estimate is computed again). */
export const STORED_CORE_VERSION = 1;

/** Bytes to store (node:v8 structured serialisation, which keeps Float64Arrays exactly), with the version. */
export function storedCoreBytes(packed: PackedCore): Buffer {
  return serialize({ version: STORED_CORE_VERSION, core: packed });
}

/** The packed core from stored bytes; null when they are of another version or unreadable (compute again). */
export function coreFromStoredBytes(bytes: Uint8Array): PackedCore | null {
  try {
    const value = deserialize(bytes) as { version?: unknown; core?: PackedCore };
    if (value.version !== STORED_CORE_VERSION || !value.core || !(value.core.orbits instanceof Float64Array)) return null;
    return value.core;
  } catch {
    return null;
  }
}
