import { describe, expect, it } from 'vitest';
import { joinNegativeValues, parseCommandArgs } from '../../src/commands/args.js';
import { UsageError } from '../../src/commands/io.js';

const io = { stdout: () => {}, stderr: () => {}, env: {}, cwd: '/' };

describe('command-line options', () => {
  it('takes a negative number after a string option as its value', () => {
    const values = parseCommandArgs(['--lat', '-33.9', '--lon', '-70.7'], { lat: { type: 'string' }, lon: { type: 'string' } }, 'help', io);
    expect(values).toMatchObject({ lat: '-33.9', lon: '-70.7' });
  });

  it('leaves flags that are not numbers alone', () => {
    expect(joinNegativeValues(['--site', 'x', '--json'], { site: { type: 'string' }, json: { type: 'boolean' } })).toEqual(['--site', 'x', '--json']);
  });

  it('turns an unknown option into a usage error', () => {
    expect(() => parseCommandArgs(['--nope'], { site: { type: 'string' } }, 'help', io)).toThrow(UsageError);
  });

  it('prints the help and answers null for --help', () => {
    const out: string[] = [];
    expect(parseCommandArgs(['--help'], {}, 'the help text', { ...io, stdout: (t: string) => out.push(t) })).toBeNull();
    expect(out.join('')).toBe('the help text\n');
  });
});
