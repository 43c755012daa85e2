// Writes schemas/*.schema.json from the zod schemas (npm run schemas).
import { writeFileSync } from 'node:fs';
import { jsonSchema, SCHEMA_NAMES } from '../src/schema/json-schema.js';

for (const name of SCHEMA_NAMES) {
  const path = new URL(`../schemas/${name}.schema.json`, import.meta.url);
  writeFileSync(path, JSON.stringify(jsonSchema(name), null, 2) + '\n');
  console.log(`wrote schemas/${name}.schema.json`);
}
