import { describe, expect, it } from 'vitest';
import { flatChannel } from '../../src/checks/flat-channel.js';
import { run } from '../helpers/context.js';
import { gaussian } from '../helpers/random.js';

describe('flat-channel check', () => {
  it('passes a varying channel', () => expect(run(flatChannel, gaussian(100, 1)).ok).toBe(true));

  it('fails a constant channel over the whole record', () => {
    const r = run(flatChannel, new Float64Array(4096).fill(-0.002));
    expect(r.ok).toBe(false);
    expect(r.at).toEqual({ startS: 0, endS: 4 });
    expect(r.message).toBe('the channel is constant at −0.002 g for the whole record: dead sensor, open cable, or missing sensor power?');
  });

  it('fails a channel with no finite samples at all', () => {
    expect(run(flatChannel, new Float64Array(10).fill(NaN)).ok).toBe(false);
  });
});
