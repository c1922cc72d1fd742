import { describe, expect, it } from 'vitest';
import { NOT_A_SIGN_OFF, durationText, spanText, terminalReport } from '../../src/report/terminal.js';
import { durationFailure, kurtosisFailure, mixedResult, passingResult, readError, symmetryWarning } from '../helpers/gate-fixtures.js';

const ANSI = /\x1b\[[0-9;]*m/;
const lines = (text: string) => text.replace(/\n$/, '').split('\n');
/** The recording lines: those not indented, before the blank line and the final lines. */
const heads = (text: string) => lines(text).slice(0, -3).filter((l) => !l.startsWith(' '));
const lineWith = (text: string, ...parts: string[]) => {
  const found = lines(text).filter((l) => parts.every((p) => l.includes(p)));
  expect(found, `a line with ${parts.join(', ')}`).toHaveLength(1);
  return found[0];
};

describe('terminal report', () => {
  const plain = terminalReport(mixedResult(), { color: false });

  it('has one line per recording: verdict word, path, channel counts, duration, sample rate', () => {
    expect(heads(plain)).toHaveLength(3);
    expect(heads(plain)[0]).toMatch(/^FAIL +runs\/shaker-a\.wav +4 channels: 1 failed, 1 warned, 1 passed, 1 not judged +30 s +1024 Hz$/);
    expect(heads(plain)[1]).toMatch(/^FAIL +runs\/short-b\.csv +1 channel: 1 passed +12\.5 s +1024 Hz$/);
    expect(heads(plain)[2]).toMatch(/^ERROR +runs\/broken\.wav +not read$/);
  });

  it('lists the failing and warning findings under their recording with the whole message', () => {
    expect(lineWith(plain, 'acc-02')).toMatch(/^ +acc-02 +FAIL +kurtosis +/);
    expect(lineWith(plain, 'acc-02')).toContain(kurtosisFailure.message);
    expect(lineWith(plain, 'mic-01')).toMatch(/^ +mic-01 +WARN +symmetry +/);
    expect(lineWith(plain, 'mic-01')).toContain(symmetryWarning.message);
    expect(lineWith(plain, 'min-duration')).toContain(durationFailure.message);
    expect(lineWith(plain, '(recording)', 'read')).toContain(readError);
    const all = lines(plain);
    const [shaker, short] = heads(plain);
    expect(all.indexOf(lineWith(plain, 'acc-02'))).toBeGreaterThan(all.indexOf(shaker));
    expect(all.indexOf(lineWith(plain, 'acc-02'))).toBeLessThan(all.indexOf(short));
    expect(all.indexOf(lineWith(plain, 'min-duration'))).toBeGreaterThan(all.indexOf(short));
  });

  it('leaves out passing and unjudged channels', () => {
    expect(plain).not.toContain('acc-01'); // passes in both readable recordings
    expect(plain).not.toContain('acc-04'); // every check skipped
  });

  it('aligns the columns', () => {
    const a = lineWith(plain, 'acc-02');
    const m = lineWith(plain, 'mic-01');
    expect(a.indexOf('kurtosis')).toBe(m.indexOf('symmetry'));
    expect(a.indexOf(kurtosisFailure.message)).toBe(m.indexOf(symmetryWarning.message));
    const [shaker, short, broken] = heads(plain);
    expect(shaker.indexOf('runs/')).toBe(short.indexOf('runs/'));
    expect(shaker.indexOf('runs/')).toBe(broken.indexOf('runs/'));
    expect(shaker.indexOf('4 channels')).toBe(short.indexOf('1 channel'));
    expect(shaker.indexOf('30 s')).toBe(short.indexOf('12.5 s'));
  });

  it('ends with the overall verdict and counts, then says screening is not a sign-off', () => {
    const all = lines(plain);
    expect(all.at(-1)).toBe(NOT_A_SIGN_OFF);
    expect(all.at(-2)).toMatch(/^ERROR +3 recordings: 2 failed, 1 unreadable; channels: 1 failed, 1 warned, 2 passed, 1 not judged$/);
    expect(plain.endsWith('\n')).toBe(true);
  });

  it('writes no colour codes when colour is off, and colours the verdict words when on', () => {
    expect(plain).not.toMatch(ANSI);
    const coloured = terminalReport(mixedResult(), { color: true });
    expect(coloured).toMatch(ANSI);
    expect(coloured).toContain('\x1b[31mFAIL\x1b[0m');
    expect(coloured).toContain('\x1b[33mWARN\x1b[0m');
    // the same report once the codes are taken out
    expect(coloured.replace(new RegExp(ANSI.source, 'g'), '')).toBe(plain);
  });

  it('quiet: only failing recordings with their failures, and the final lines', () => {
    const quiet = terminalReport(mixedResult(), { color: false, quiet: true });
    expect(quiet).not.toContain('WARN');
    expect(quiet).not.toContain('mic-01');
    expect(quiet).not.toContain('note:');
    expect(lineWith(quiet, 'acc-02')).toContain(kurtosisFailure.message);
    expect(quiet).toContain('runs/broken.wav');
    expect(lines(quiet).at(-1)).toBe(NOT_A_SIGN_OFF);

    const pass = lines(terminalReport(passingResult(), { color: false, quiet: true }));
    expect(pass).toEqual([expect.stringMatching(/^PASS +1 recording: 1 passed; channels: 0 failed, 0 warned, 1 passed$/), NOT_A_SIGN_OFF]);
  });

  it('not quiet: a passing recording still has its line', () => {
    expect(lineWith(terminalReport(passingResult(), { color: false }), 'runs/good.wav')).toMatch(/^PASS +runs\/good\.wav +1 channel: 1 passed/);
  });
});

describe('terminal report formats', () => {
  it.each([
    [12.5, '12.5 s'],
    [59.96, '59.96 s'],
    [60, '1 min 00.0 s'],
    [599.96, '10 min 00.0 s'], // rounds once, never "9 min 60.0 s"
    [245, '4 min 05.0 s'],
    [3725, '1 h 02 min'],
  ])('durationText(%s) is %s', (seconds, text) => {
    expect(durationText(seconds)).toBe(text);
  });

  it('spanText shows a stretch with an en dash and an instant alone', () => {
    expect(spanText({ startS: 12, endS: 13 })).toBe('12–13 s');
    expect(spanText({ startS: 3600.25, endS: 3600.25 })).toBe('3600.25 s');
    expect(spanText({ startS: 1 / 51200, endS: 2 / 51200 })).toBe('0.00002–0.000039 s');
  });
});
