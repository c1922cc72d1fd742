import type { Check, JsonSchema } from './types.js';
import { nonFinite } from './non-finite.js';
import { flatChannel } from './flat-channel.js';
import { deadChannel } from './dead-channel.js';
import { dropout } from './dropout.js';
import { clipping } from './clipping.js';
import { meanOffset } from './mean-offset.js';
import { symmetry } from './symmetry.js';
import { skewness } from './skewness.js';
import { kurtosis } from './kurtosis.js';
import { crestFactor } from './crest-factor.js';
import { rmsLevel } from './rms-level.js';
import { frameRmsSpread } from './frame-rms-spread.js';
import { stationarity } from './stationarity.js';
import { groupOutlier } from './group-outlier.js';
import { duplicateChannel } from './duplicate-channel.js';
import { mainsHum } from './mains-hum.js';
import { rangeUtilisation } from './range-utilisation.js';
import { frameLength } from './frame-length.js';

/**
 * Every check, in the order findings are reported (universal data faults first, then the
 * shape of the distribution, then levels and trends). Adding a check = one file + one line.
 */
export const checks: ReadonlyArray<Check<any>> = [
  nonFinite,
  flatChannel,
  deadChannel,
  duplicateChannel,
  dropout,
  clipping,
  rangeUtilisation,
  meanOffset,
  symmetry,
  skewness,
  kurtosis,
  crestFactor,
  mainsHum,
  rmsLevel,
  groupOutlier,
  frameRmsSpread,
  stationarity,
  frameLength,
];

const byId = new Map(checks.map((c) => [c.id, c]));

export function getCheck(id: string): Check<any> | undefined {
  return byId.get(id);
}

/** JSON Schema of one check's settings in a rule file: its options plus `severity`. */
export function checkSettingsSchema(check: Check<any>): JsonSchema {
  return {
    type: 'object',
    description: check.description,
    properties: {
      severity: { enum: ['error', 'warning'], description: `error fails the gate, warning only reports (default ${check.defaultSeverity}).` },
      ...check.options,
    },
    additionalProperties: false,
  };
}
