/**
 * The JSON Schema of a rule file (docs/rule-files.md), built from the check registry so
 * that adding a check adds its options to the schema. `schemas/rules.schema.json` is this
 * schema written out by `scripts/build-schemas.mjs`; a test fails when that file is stale.
 *
 * Every object is closed (`additionalProperties: false`): a misspelt key is an error, not
 * a silently ignored setting. What a schema cannot say (a range's low ≤ high) the loader
 * checks after validation.
 */
import { checks, checkSettingsSchema } from '../checks/registry.js';
import type { JsonSchema } from '../checks/types.js';

export const RULES_SCHEMA_ID = 'https://vibgate.dev/schemas/rules-1.json';

/** The selector fields of a `channels:` entry, in the order messages list them. */
export const SELECTOR_FIELDS = ['name', 'sensor', 'unit', 'group'] as const;

/** Whether an option's schema is a `[low, high]` range of numbers (checked low ≤ high). */
export function isRangeSchema(schema: JsonSchema | undefined): boolean {
  if (schema === undefined || schema.type !== 'array') return false;
  const items = schema.prefixItems;
  return (
    Array.isArray(items) &&
    items.length === 2 &&
    items.every((s) => typeof s === 'object' && s !== null && (s as JsonSchema).type === 'number')
  );
}

const nonEmptyString = (description?: string): JsonSchema => ({
  type: 'string',
  minLength: 1,
  ...(description === undefined ? {} : { description }),
});

/** One value or a non-empty list of them (selector fields). */
const oneOrMany = (description: string): JsonSchema => ({
  description,
  anyOf: [nonEmptyString(), { type: 'array', items: nonEmptyString(), minItems: 1 }],
});

/** A check's entry: a switch word or its settings. */
function checkEntry(settings: JsonSchema): JsonSchema {
  return {
    anyOf: [
      {
        enum: ['on', 'off', true, false],
        description: 'on (or true): run the check with the limits set so far (its defaults if none); off (or false): do not run it.',
      },
      settings,
    ],
  };
}

/** In a `channels:` entry a check's settings only replace some keys, so none is required. */
function partial(settings: JsonSchema): JsonSchema {
  const { required: _required, ...rest } = settings;
  return rest;
}

function checksObject(description: string, forChannels: boolean): JsonSchema {
  const properties: Record<string, JsonSchema> = {};
  for (const check of checks) {
    const settings = checkSettingsSchema(check);
    properties[check.id] = checkEntry(forChannels ? partial(settings) : settings);
  }
  return { type: 'object', description, properties, additionalProperties: false };
}

/** The rule-file schema (JSON Schema draft 2020-12). */
export function rulesSchema(): JsonSchema {
  const positiveHz = { type: 'number', exclusiveMinimum: 0 };
  return {
    $schema: 'https://json-schema.org/draft/2020-12/schema',
    $id: RULES_SCHEMA_ID,
    title: 'vibgate rule file',
    description:
      'Which checks vibgate runs on each channel of a recording, with which limits and severities. See docs/rule-files.md.',
    type: 'object',
    required: ['format', 'name'],
    additionalProperties: false,
    properties: {
      format: { const: 1, description: 'Rule-file format version; 1 is the only one so far.' },
      name: nonEmptyString('A short name, shown in reports.'),
      description: { type: 'string', description: 'What the file is for and why its limits are what they are.' },
      'test-kind': { type: 'string', description: 'The kind of test, in words (for example "random vibration").' },
      owner: { type: 'string', description: 'Who keeps this file.' },
      extends: {
        description: 'Base rule file(s), relative to this file; read first, in list order.',
        anyOf: [nonEmptyString(), { type: 'array', items: nonEmptyString() }],
      },
      analysis: {
        type: 'object',
        description: 'How the record is cut into frames for frame-wise statistics.',
        additionalProperties: false,
        properties: {
          'frame-seconds': { type: 'number', exclusiveMinimum: 0, description: 'Frame length in seconds (default 1).' },
          overlap: {
            type: 'number',
            minimum: 0,
            exclusiveMaximum: 1,
            description: 'Fraction of a frame shared with the next, 0 ≤ f < 1 (default 0).',
          },
        },
      },
      checks: checksObject('The checks to run; a check not named here (or in a base file) is not run.', false),
      channels: {
        type: 'array',
        description: 'Adjustments for some channels, applied in order after `checks`.',
        items: {
          type: 'object',
          additionalProperties: false,
          required: ['match', 'checks'],
          properties: {
            match: {
              type: 'object',
              description: 'Which channels the entry applies to; every given field must match, a list means any of.',
              additionalProperties: false,
              minProperties: 1,
              properties: {
                name: oneOrMany('Glob(s) on the channel name: * any run of characters, ? one character (case-sensitive).'),
                sensor: oneOrMany('Sensor type(s), for example accelerometer (case-insensitive).'),
                unit: oneOrMany('Unit(s), for example g or Pa (case-insensitive).'),
                group: oneOrMany('Channel group(s) from the sidecar (case-insensitive).'),
              },
            },
            checks: checksObject('off switches a check off for these channels; settings replace keys (and switch it on).', true),
          },
        },
      },
      expect: {
        type: 'object',
        description: 'Expectations on each recording as a whole.',
        additionalProperties: false,
        properties: {
          'min-duration-seconds': { type: 'number', exclusiveMinimum: 0, description: 'Shortest accepted record, in seconds.' },
          'sample-rate': {
            description: 'Accepted sample rate in Hz: one value, or a range [low, high].',
            anyOf: [
              positiveHz,
              { type: 'array', prefixItems: [positiveHz, positiveHz], items: false, minItems: 2, maxItems: 2 },
            ],
          },
          channels: { type: 'integer', minimum: 1, description: 'Number of channels a recording must have.' },
          'channel-names': {
            type: 'array',
            description: 'Channel names that must be present.',
            items: nonEmptyString(),
            minItems: 1,
            uniqueItems: true,
          },
          severity: { enum: ['error', 'warning'], description: 'Severity of the expectations (default error).' },
        },
      },
    },
  };
}
