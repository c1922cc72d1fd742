import type { Check } from './types.js';
import { positive, show, withUnit } from './util.js';

interface Options {
  hz: number;
  harmonics: number;
  'max-ratio': number;
  'min-prominence-db': number;
}

/**
 * Pick-up from the mains (a ground loop, an unshielded cable beside power wiring, a missing
 * common-mode ground) adds lines at 50 or 60 Hz and their harmonics. The lines are measured
 * with the Goertzel algorithm on Hann-windowed sampled segments (mains-lines.ts) and counted
 * only where they stand out of the spectrum beside them by `min-prominence-db`: a
 * structural resonance near 50 Hz is broad and does not (the floor is taken 1.5 to 2.5 Hz
 * either side with 2 s segments). Their RMS together is judged against the channel's
 * broadband RMS. Limits: common practice, no source — a line of a tenth of the broadband
 * RMS (1 % of the power) stands well out of a spectrum and biases a PSD at that frequency.
 *
 * A limit of the method: a line riding on a lightly damped mode at the same frequency (ζ of
 * about 2 %: a mode 2 Hz wide at 50 Hz) is not told from the mode, because two-second segments
 * resolve 0.5 Hz and the floor beside the line is then the mode's own flank.
 */
export const mainsHum: Check<Options> = {
  id: 'mains-hum',
  description: 'Lines at the mains frequency and its harmonics (Goertzel on sampled segments) stay below a fraction of the broadband RMS.',
  options: {
    hz: { enum: [50, 60, 16.7, 400], description: 'Mains (or on-board supply) frequency in Hz.' },
    harmonics: { type: 'integer', minimum: 1, maximum: 20, description: 'Harmonics measured, 1 = the fundamental only.' },
    'max-ratio': positive('Largest accepted RMS of the lines together over the broadband RMS.'),
    'min-prominence-db': { type: 'number', minimum: 0, description: 'A line counts only this many dB above the spectrum beside it.' },
  },
  defaults: { hz: 50, harmonics: 5, 'max-ratio': 0.1, 'min-prominence-db': 10 },
  defaultSeverity: 'warning',
  needs: (o) => ({ lines: [{ fundamentalHz: o.hz, harmonics: o.harmonics }] }),
  evaluate(ctx, o) {
    const limit = `≤ ${show(o['max-ratio'])} × broadband RMS`;
    const measured = ctx.segments?.lines.find((l) => l.fundamentalHz === o.hz);
    if (!measured || ctx.segments!.used === 0 || !(measured.broadbandRms > 0)) {
      return { ok: null, value: null, limit, message: 'no sampled segment with variation to measure mains lines on' };
    }
    const levels = measured.levels.filter((l) => l.harmonic <= o.harmonics && Number.isFinite(l.rms));
    const lines = levels.filter((l) => l.prominenceDb >= o['min-prominence-db']);
    // the line's own power, without the floor that shares its bandwidth
    const power = lines.reduce((a, l) => a + Math.max(0, l.rms * l.rms - l.floorRms * l.floorRms), 0);
    const ratio = Math.sqrt(power) / measured.broadbandRms;
    const listed = lines
      .slice().sort((a, b) => b.rms - a.rms).slice(0, 3)
      .map((l) => `${show(l.hz)} Hz ${withUnit(l.rms, ctx)} (${show(l.prominenceDb)} dB above its neighbours)`)
      .join(', ');
    const base = `broadband RMS ${withUnit(measured.broadbandRms, ctx)}`;
    if (lines.length === 0) {
      const top = levels.reduce((a, l) => (a === null || l.prominenceDb > a.prominenceDb ? l : a), null as (typeof levels)[number] | null);
      return {
        ok: true, value: 0, unit: '', limit,
        message: `no line at ${show(o.hz)} Hz or its ${o.harmonics - 1} harmonics stands ${show(o['min-prominence-db'])} dB out of the spectrum` +
          (top ? ` (most: ${show(top.nominalHz)} Hz, ${show(top.prominenceDb)} dB)` : '') + `; ${base}`,
      };
    }
    const seen = `mains lines hold ${show(ratio)} of the ${base}: ${listed}`;
    if (ratio <= o['max-ratio']) return { ok: true, value: ratio, unit: '', limit, message: `${seen}; limit ${limit}` };
    return {
      ok: false, value: ratio, unit: '', limit,
      message: `${seen}, above the limit ${limit}: a ground loop, an unshielded cable beside power wiring, or a missing common-mode ground?`,
    };
  },
};
