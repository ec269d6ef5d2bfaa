// `npm run schema`: writes config/residuum.schema.json and config/collector.schema.json, the JSON
// Schemas of the two configuration files, from their zod schemas (src/config/configSchema.ts), for
// editors (a `# yaml-language-server: $schema=…` line at the top of a configuration file). The
// files are committed; test/config/configJsonSchema.test.ts generates them afresh and checks that
// they match, and validates the example configurations against them.
import { writeFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { z } from 'zod';
import { collectorConfigSchema, residuumConfigSchema } from '../src/config/configSchema.ts';

/** The schema files, by name under config/. */
export const CONFIG_SCHEMA_FILES = {
  'residuum.schema.json': { title: 'Residuum configuration (residuum run, demo, learn)', schema: residuumConfigSchema },
  'collector.schema.json': { title: 'Residuum collector configuration (residuum collect)', schema: collectorConfigSchema },
} as const;

/**
 * The JSON Schema text of one file. Draft-07 (zod's `target: 'draft-7'`), which is what the YAML
 * language server reads ("Supports JSON Schema 7 and below", its README) and Ajv's default; the
 * schema describes the file as written (`io: 'input'`: defaults shown, fields with defaults
 * optional). Checks that need the program (a zone polygon that crosses itself, a secret that
 * cannot be read, an unknown time zone) are not in it: the program's own validation remains the
 * last word.
 */
export function configJsonSchemaText(name: keyof typeof CONFIG_SCHEMA_FILES): string {
  const { title, schema } = CONFIG_SCHEMA_FILES[name];
  // The folder only matters to transforms (paths, secrets), which the JSON Schema never runs.
  const json = z.toJSONSchema(schema({ base: '.', env: {} }), { target: 'draft-7', io: 'input', unrepresentable: 'throw', override: requiredAsParsed });
  return JSON.stringify({ ...json, title }, null, 2) + '\n';
}

/**
 * A key is `required` when its schema refuses its absence. zod reads that from the schema's kind,
 * and counts every field that begins with a preprocess (mapping's unknown-key check, the zone list,
 * a secret) as optional; asking the field itself gives the rule the program applies.
 */
function requiredAsParsed(ctx: { zodSchema: z.core.$ZodTypes; jsonSchema: z.core.JSONSchema.BaseSchema }): void {
  if (ctx.zodSchema._zod.def.type !== 'object' || ctx.jsonSchema.properties === undefined) return;
  const shape = (ctx.zodSchema as z.core.$ZodObject)._zod.def.shape;
  const required = Object.keys(shape).filter((key) => !z.safeParse(shape[key], undefined).success);
  if (required.length > 0) ctx.jsonSchema.required = required;
  else delete ctx.jsonSchema.required;
}

if (process.argv[1] === fileURLToPath(import.meta.url)) {
  for (const name of Object.keys(CONFIG_SCHEMA_FILES) as (keyof typeof CONFIG_SCHEMA_FILES)[]) {
    const file = fileURLToPath(new URL(`../config/${name}`, import.meta.url));
    writeFileSync(file, configJsonSchemaText(name));
    console.log(`wrote ${file}`);
  }
}
