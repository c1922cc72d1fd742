import { describe, expect, it } from 'vitest';
import { checksForChannel, globMatch, selectorMatches } from '../../src/rules/select.js';
import { getCheck } from '../../src/checks/registry.js';
import type { ResolvedRules } from '../../src/rules/types.js';

describe('globMatch()', () => {
  it.each([
    ['force-*', 'force-01', true],
    ['force-*', 'force-', true],
    ['force-*', 'Force-01', false],
    ['acc-??', 'acc-01', true],
    ['acc-??', 'acc-1', false],
    ['acc-??', 'acc-001', false],
    ['*', '', true],
    ['', '', true],
    ['', 'a', false],
    ['*-*-*', 'deck-2-z', true],
    ['*-*-*', 'deck-2', false],
    ['a*b*c', 'axxbyyc', true],
    ['a*b*c', 'axxbyy', false],
    ['*x', 'xxxx', true],
    ['?', 'é', true],
    ['?', '😀', true],
    ['mic?', 'mic😀', true],
  ])('globMatch(%j, %j) is %s', (glob, name, expected) => {
    expect(globMatch(glob, name)).toBe(expected);
  });

  it.each([
    ['a.c', 'abc'],
    ['[ab]', 'a'],
    ['a+', 'aa'],
    ['(x|y)', 'x'],
    ['^acc$', 'acc'],
    ['\\d', '1'],
    ['{a,b}', 'a'],
  ])('treats %j literally: it does not match %j', (glob, name) => {
    expect(globMatch(glob, name)).toBe(false);
    expect(globMatch(glob, glob)).toBe(true);
  });

  it('answers a pattern that makes backtracking regular expressions explode, at once', () => {
    // `a*a*…*b` against a run of a's is exponential for a backtracking regex engine.
    const glob = `${'a*'.repeat(30)}b`;
    const name = 'a'.repeat(20_000);
    const started = performance.now();
    expect(globMatch(glob, name)).toBe(false);
    expect(performance.now() - started).toBeLessThan(2_000);
  });
});

describe('selectorMatches()', () => {
  it('matches sensor, unit and group whatever their case, names only in theirs', () => {
    const channel = { name: 'Mic-1', sensor: 'Microphone', unit: 'PA', group: 'Room' };
    expect(selectorMatches({ sensor: 'microphone', unit: 'pa', group: 'ROOM' }, channel)).toBe(true);
    expect(selectorMatches({ name: 'mic-*' }, channel)).toBe(false);
    expect(selectorMatches({ name: 'Mic-*' }, channel)).toBe(true);
  });

  it('needs every given field to match, and any one value of a list', () => {
    const channel = { name: 'acc-01', sensor: 'accelerometer', unit: 'g' };
    expect(selectorMatches({ sensor: 'accelerometer', unit: 'm/s^2' }, channel)).toBe(false);
    expect(selectorMatches({ sensor: 'accelerometer', unit: ['m/s^2', 'g'] }, channel)).toBe(true);
    expect(selectorMatches({ name: ['force-*', 'acc-0?'] }, channel)).toBe(true);
  });

  it('does not match a field the channel does not have', () => {
    expect(selectorMatches({ group: 'deck' }, { name: 'acc-01' })).toBe(false);
  });
});

describe('checksForChannel()', () => {
  const kurtosisDefaults = getCheck('kurtosis')!.defaults as Record<string, unknown>;
  const meanOffset = getCheck('mean-offset')!;
  const rules: ResolvedRules = {
    name: 'lab',
    files: [],
    analysis: { frameSeconds: 1, overlap: 0 },
    checks: {
      skewness: { severity: 'error', options: { whole: [-0.3, 0.3], frames: [-1, 1] } },
      kurtosis: { severity: 'warning', options: { whole: [2.5, 3.6], frames: [1.5, 8] } },
    },
    channels: [
      { match: { name: 'force-*' }, checks: { kurtosis: false, skewness: false }, source: 'lab.yaml:10:5' },
      { match: { sensor: 'microphone' }, checks: { 'mean-offset': { 'max-ratio-to-std': 0.05 } }, source: 'lab.yaml:12:5' },
      { match: { name: 'acc-*' }, checks: { kurtosis: { frames: [1, 12] } }, source: 'lab.yaml:14:5' },
      { match: { name: 'force-0?' }, checks: { kurtosis: { severity: 'error' } }, source: 'lab.yaml:16:5' },
      { match: { group: 'deck', unit: 'g' }, checks: { skewness: {} }, source: 'lab.yaml:18:5' },
    ],
    expect: { severity: 'error' },
  };

  it('runs the file’s checks on a channel no entry matches', () => {
    expect(checksForChannel(rules, { name: 'ch1' })).toEqual(rules.checks);
  });

  it('switches checks off for matching channels', () => {
    expect(checksForChannel(rules, { name: 'force-x' })).toEqual({});
  });

  it('switches a check on with its defaults overlaid by the entry’s keys', () => {
    expect(checksForChannel(rules, { name: 'm1', sensor: 'Microphone' })).toEqual({
      ...rules.checks,
      'mean-offset': { severity: meanOffset.defaultSeverity, options: { ...meanOffset.defaults, 'max-ratio-to-std': 0.05 } },
    });
  });

  it('replaces only the keys an entry gives, keeping the rest of the current setting', () => {
    expect(checksForChannel(rules, { name: 'acc-01' }).kurtosis).toEqual({
      severity: 'warning',
      options: { whole: [2.5, 3.6], frames: [1, 12] },
    });
  });

  it('applies entries in order: a later entry brings back what an earlier one switched off, from defaults', () => {
    expect(checksForChannel(rules, { name: 'force-01' })).toEqual({
      kurtosis: { severity: 'error', options: kurtosisDefaults },
    });
  });

  it('needs all fields of a selector to match', () => {
    const onDeck = checksForChannel(rules, { name: 'force-x', group: 'Deck', unit: 'g' });
    expect(Object.keys(onDeck)).toEqual(['skewness']);
    expect(checksForChannel(rules, { name: 'force-x', group: 'deck', unit: 'N' })).toEqual({});
  });

  it('lists checks in registry order and returns a copy the caller may change', () => {
    const result = checksForChannel(rules, { name: 'm1', sensor: 'microphone' });
    expect(Object.keys(result)).toEqual(['mean-offset', 'skewness', 'kurtosis']);
    (result.kurtosis.options.whole as number[])[0] = 99;
    expect(rules.checks.kurtosis.options.whole).toEqual([2.5, 3.6]);
  });
});
