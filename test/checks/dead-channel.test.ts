import { describe, expect, it } from 'vitest';
import { deadChannel } from '../../src/checks/dead-channel.js';
import { run } from '../helpers/context.js';
import { gaussian } from '../helpers/random.js';

const peers = [gaussian(8192, 11, 2), gaussian(8192, 12, 3), gaussian(8192, 13, 0.8), gaussian(8192, 14, 1.5)];

describe('dead-channel check', () => {
  it('passes a channel whose level is within the spread of its group', () => {
    const r = run(deadChannel, gaussian(8192, 1, 0.5), {}, { peerSignals: peers });
    expect(r.ok).toBe(true);
  });

  it('fails a channel at the noise floor: RMS 1/1000 of the group median', () => {
    const r = run(deadChannel, gaussian(8192, 2, 0.0015), {}, { peerSignals: peers });
    expect(r.ok).toBe(false);
    expect(r.value!).toBeLessThan(0.01);
    expect(r.message).toMatch(/is 0\.00\d+ × the median of its group of 5 \(1\.\d+ g\), below the limit/);
    expect(r.message).toContain('dead or disconnected sensor');
  });

  it('skips the group comparison with too few peers, unless a floor in units is given', () => {
    expect(run(deadChannel, gaussian(1000, 3, 0.001), {}, { peerSignals: [peers[0]] }).ok).toBeNull();
    expect(run(deadChannel, gaussian(1000, 3, 0.001), { 'min-rms': 0.01 }, { peerSignals: [peers[0]] }).ok).toBe(false);
  });
});
