import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { UsageError } from '../../src/errors.js';
import { parseShard, selectShard, selectionOf } from '../../src/cli/shard.js';

const paths = Array.from({ length: 23 }, (_, k) => `data/run-${String(k).padStart(3, '0')}.wav`);

function shuffled<T>(list: T[], seed: number): T[] {
  const out = [...list];
  let s = seed;
  for (let i = out.length - 1; i > 0; i--) {
    s = (s * 1103515245 + 12345) % 2147483648;
    const j = s % (i + 1);
    [out[i], out[j]] = [out[j], out[i]];
  }
  return out;
}

describe('parseShard', () => {
  it.each([
    ['1/1', { index: 1, count: 1 }],
    ['2/4', { index: 2, count: 4 }],
    ['4/4', { index: 4, count: 4 }],
    [' 3 / 10 ', { index: 3, count: 10 }],
  ])('reads "%s"', (text, share) => {
    expect(parseShard(text)).toEqual(share);
  });

  it.each([
    ['2', '--shard must be i/n, job i of n counted from 1 (for example --shard 2/4), not "2"'],
    ['a/b', '--shard must be i/n, job i of n counted from 1 (for example --shard 2/4), not "a/b"'],
    ['-1/4', '--shard must be i/n, job i of n counted from 1 (for example --shard 2/4), not "-1/4"'],
    ['1.5/4', '--shard must be i/n, job i of n counted from 1 (for example --shard 2/4), not "1.5/4"'],
    ['0/4', '--shard 0/4: the job number i must be between 1 and 4'],
    ['5/4', '--shard 5/4: the job number i must be between 1 and 4'],
    ['1/0', '--shard 1/0: the number of jobs n must be at least 1'],
  ])('refuses "%s" with a UsageError', (text, message) => {
    expect(() => parseShard(text)).toThrow(new UsageError(message));
    expect(() => parseShard(text)).toThrow(UsageError);
  });

  it('names the option it parses', () => {
    expect(() => parseShard('0/2', '--section')).toThrow('--section 0/2: the job number i must be between 1 and 2');
  });
});

describe('selectShard', () => {
  it('puts every recording in exactly one shard, for any number of shards', () => {
    for (const count of [1, 2, 3, 4, 7, 23, 30]) {
      const shares = Array.from({ length: count }, (_, i) => selectShard(paths, { index: i + 1, count }));
      expect(shares.flat().sort()).toEqual([...paths].sort());
      // sizes differ by at most one recording
      const sizes = shares.map((s) => s.length);
      expect(Math.max(...sizes) - Math.min(...sizes)).toBeLessThanOrEqual(1);
    }
  });

  it('gives each job the same share whatever order the list comes in', () => {
    const reference = Array.from({ length: 4 }, (_, i) => selectShard(paths, { index: i + 1, count: 4 }));
    for (const seed of [1, 2, 3, 99]) {
      const list = shuffled(paths, seed);
      expect(list).not.toEqual(paths);
      for (let i = 0; i < 4; i++) expect(new Set(selectShard(list, { index: i + 1, count: 4 }))).toEqual(new Set(reference[i]));
    }
  });

  it('keeps the given order within a share, and takes a path given twice once', () => {
    const list = ['b.wav', 'a.wav', 'c.wav', 'a.wav', 'd.wav'];
    // sorted: a b c d → job 1 of 2 gets a and c, job 2 gets b and d
    expect(selectShard(list, { index: 1, count: 2 })).toEqual(['a.wav', 'c.wav']);
    expect(selectShard(list, { index: 2, count: 2 })).toEqual(['b.wav', 'd.wav']);
  });

  it('sorts by code unit, not by locale, so every runner agrees', () => {
    // a locale collation would put "B.wav" after "a.wav"; code units put capitals first
    expect(selectShard(['a.wav', 'B.wav'], { index: 1, count: 2 })).toEqual(['B.wav']);
  });

  it('is a partition for random lists and shard counts', () => {
    fc.assert(
      fc.property(fc.array(fc.string(), { maxLength: 40 }), fc.integer({ min: 1, max: 9 }), (list, count) => {
        const shares = Array.from({ length: count }, (_, i) => selectShard(list, { index: i + 1, count }));
        const all = shares.flat();
        expect(new Set(all).size).toBe(all.length);
        expect(new Set(all)).toEqual(new Set(list));
      }),
    );
  });

  it('refuses a share outside 1..n', () => {
    expect(() => selectShard(paths, { index: 0, count: 4 })).toThrow('Shard 0/4 is not valid: it must be i/n with 1 ≤ i ≤ n');
  });
});

describe('selectionOf', () => {
  it('identifies the set of recordings, not its order', () => {
    expect(selectionOf(shuffled(paths, 5))).toEqual(selectionOf(paths));
    expect(selectionOf(paths).recordings).toBe(23);
    expect(selectionOf(paths.slice(1)).sha256).not.toBe(selectionOf(paths).sha256);
  });
});
