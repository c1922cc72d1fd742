import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { loadRules } from '../../src/rules/load.js';

const root = fileURLToPath(new URL('../../', import.meta.url));

describe('examples/rules', () => {
  it('shaker-random-bands.yaml loads and states kurtosis and skewness limits as a confidence level', async () => {
    const rules = await loadRules(`${root}examples/rules/shaker-random-bands.yaml`, { cwd: root });
    expect(rules.checks.kurtosis.options.confidence).toBe(0.999);
    expect(rules.checks.skewness.options.confidence).toBe(0.999);
    expect(rules.checks['frame-length'].severity).toBe('warning');
    // the base's fixed ranges stay, for channels where no band can be set
    expect(rules.checks.kurtosis.options.whole).toEqual([2.4, 4]);
  });
});
