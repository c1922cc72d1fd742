#!/usr/bin/env node
// Writes schemas/rules.schema.json from the check registry (style.md habit 2). Runs against
// the built library, so run it as `npm run schemas` (which builds first).
// test/rules/schema.test.ts fails when the committed file is stale.
import { writeFileSync, renameSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

const { rulesSchema } = await import('../dist/rules/schema.js');
const target = fileURLToPath(new URL('../schemas/rules.schema.json', import.meta.url));
const temporary = `${target}.tmp-${process.pid}`;
writeFileSync(temporary, JSON.stringify(rulesSchema(), null, 2) + '\n');
renameSync(temporary, target);
console.log(`wrote ${target}`);
