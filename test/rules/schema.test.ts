import { describe, expect, it } from 'vitest';
import { existsSync, readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { Ajv2020 } from 'ajv/dist/2020.js';
import { checks, checkSettingsSchema } from '../../src/checks/registry.js';
import { isRangeSchema, rulesSchema } from '../../src/rules/schema.js';

const committedPath = fileURLToPath(new URL('../../schemas/rules.schema.json', import.meta.url));
type Schema = Record<string, any>;

describe('schemas/rules.schema.json', () => {
  it('is what the check registry generates now (else run "npm run schemas")', () => {
    expect(readFileSync(committedPath, 'utf8')).toBe(JSON.stringify(rulesSchema(), null, 2) + '\n');
  });

  it('is a draft 2020-12 schema with a versioned $id that ajv compiles in strict mode', () => {
    const schema = JSON.parse(readFileSync(committedPath, 'utf8')) as Schema;
    expect(schema.$schema).toBe('https://json-schema.org/draft/2020-12/schema');
    expect(schema.$id).toBe('https://vibgate.dev/schemas/rules-1.json');
    expect(() => new Ajv2020({ strict: true }).compile(schema)).not.toThrow();
  });

  it('closes every object it describes with additionalProperties: false', () => {
    const open: string[] = [];
    const walk = (node: unknown, at: string): void => {
      if (Array.isArray(node)) node.forEach((n, i) => walk(n, `${at}/${i}`));
      else if (typeof node === 'object' && node !== null) {
        const s = node as Schema;
        if (s.type === 'object' && s.additionalProperties !== false) open.push(at);
        for (const [k, v] of Object.entries(s)) walk(v, `${at}/${k}`);
      }
    };
    walk(rulesSchema(), '#');
    expect(open).toEqual([]);
  });

  it('accepts the example of docs/rule-files.md', () => {
    const docs = readFileSync(fileURLToPath(new URL('../../docs/rule-files.md', import.meta.url)), 'utf8');
    const yamlBlock = /```yaml\n([\s\S]*?)```/.exec(docs)![1];
    return import('yaml').then(({ parse }) => {
      const validate = new Ajv2020({ strict: true, allErrors: true }).compile(rulesSchema());
      expect(validate(parse(yamlBlock)), JSON.stringify(validate.errors)).toBe(true);
    });
  });
});

describe('every registered check (meta-test)', () => {
  const schema = rulesSchema() as Schema;
  const fileChecks = schema.properties.checks.properties as Record<string, Schema>;
  const channelChecks = schema.properties.channels.items.properties.checks.properties as Record<string, Schema>;

  it('is the whole of the schema’s checks, in registry order, in checks and in channels', () => {
    expect(Object.keys(fileChecks)).toEqual(checks.map((c) => c.id));
    expect(Object.keys(channelChecks)).toEqual(checks.map((c) => c.id));
  });

  describe.each(checks.map((c) => [c.id, c] as const))('%s', (id, check) => {
    it('appears with its options and severity, switchable on and off', () => {
      const [switches, settings] = fileChecks[id].anyOf as Schema[];
      expect(switches.enum).toEqual(['on', 'off', true, false]);
      expect(settings).toEqual(checkSettingsSchema(check));
      expect(Object.keys(settings.properties)).toEqual(['severity', ...Object.keys(check.options)]);
      expect(Object.keys(channelChecks[id].anyOf[1].properties)).toEqual(['severity', ...Object.keys(check.options)]);
      expect(channelChecks[id].anyOf[1].required).toBeUndefined();
    });

    it('has a one-line description, and every option one', () => {
      expect(check.description).toMatch(/^\S.*\S$/);
      expect(check.description).not.toContain('\n');
      for (const [option, optionSchema] of Object.entries(check.options)) {
        expect(typeof optionSchema.description, `${id}.${option}`).toBe('string');
      }
    });

    it('has defaults that its own options schema accepts', () => {
      const validate = new Ajv2020({ strict: true }).compile(checkSettingsSchema(check));
      expect(validate(check.defaults), JSON.stringify(validate.errors)).toBe(true);
      for (const [option, optionSchema] of Object.entries(check.options)) {
        const value = (check.defaults as Record<string, unknown>)[option];
        if (isRangeSchema(optionSchema) && Array.isArray(value)) expect(value[0], `${id}.${option}`).toBeLessThanOrEqual(value[1]);
      }
    });

    it(`has its tests in test/checks/${id}.test.ts`, () => {
      expect(existsSync(fileURLToPath(new URL(`../checks/${id}.test.ts`, import.meta.url)))).toBe(true);
    });
  });
});
