import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Ajv, type ValidateFunction } from 'ajv';
import { describe, expect, it } from 'vitest';
import { parse as parseYaml } from 'yaml';
import { configJsonSchemaText, CONFIG_SCHEMA_FILES } from '../../scripts/buildConfigSchemas.ts';
import { ConfigError, loadConfig, validateConfig } from '../../src/config/loadConfig.ts';
import { validateCollectorConfig } from '../../src/outputs/mqtt/collectorConfig.ts';

const configDir = fileURLToPath(new URL('../../config/', import.meta.url));
const readme = readFileSync(fileURLToPath(new URL('../../README.md', import.meta.url)), 'utf8');
const committed = (name: string) => JSON.parse(readFileSync(join(configDir, name), 'utf8')) as Record<string, unknown>;

// check: Ajv 8 (a dev dependency, a general-purpose JSON Schema validator), whose default class is
// JSON Schema draft-07 — the draft zod writes with target 'draft-7' ("$schema":
// "http://json-schema.org/draft-07/schema#", the draft-07 meta-schema's id, json-schema.org/draft-07).
// strict: unknown keywords or formats in the schema are errors, not ignored.
const ajv = new Ajv({ allErrors: true, strict: true });
const residuum = committed('residuum.schema.json');
const collector = committed('collector.schema.json');
ajv.addSchema(residuum, 'residuum').addSchema(collector, 'collector');
const schemaAt = (ref: string): ValidateFunction => ajv.getSchema(ref) ?? ajv.compile({ $ref: ref });
const jsonErrors = (validate: ValidateFunction) => ajv.errorsText(validate.errors);

/** The README elides parts shown elsewhere as `[ … ]` or `{ … }`: those keys are left out. */
function withoutElisions(v: unknown): unknown {
  const elided = (x: unknown) => JSON.stringify(x) === '["…"]' || JSON.stringify(x) === '{"…":null}';
  if (Array.isArray(v)) return v.map(withoutElisions);
  if (typeof v !== 'object' || v === null) return v;
  return Object.fromEntries(Object.entries(v).filter(([, x]) => !elided(x)).map(([k, x]) => [k, withoutElisions(x)]));
}

describe('the JSON Schemas of the configuration files (config/*.schema.json)', () => {
  it('are what `npm run schema` makes of the zod schemas now (rerun it after changing src/config/configSchema.ts)', () => {
    for (const name of Object.keys(CONFIG_SCHEMA_FILES) as (keyof typeof CONFIG_SCHEMA_FILES)[]) {
      expect(readFileSync(join(configDir, name), 'utf8'), name).toBe(configJsonSchemaText(name));
    }
  });

  it('are draft-07 schemas that the draft-07 meta-schema accepts', () => {
    for (const schema of [residuum, collector]) {
      expect(schema.$schema).toBe('http://json-schema.org/draft-07/schema#');
      expect(ajv.validateSchema(schema), ajv.errorsText()).toBe(true);
    }
  });

  it('accept every example configuration in config/, which the program loads too', () => {
    const files = readdirSync(configDir).filter((f) => f.endsWith('.yaml'));
    let checked = 0;
    for (const file of files) {
      const text = readFileSync(join(configDir, file), 'utf8');
      const doc = parseYaml(text) as Record<string, unknown>;
      const modeline = /^# yaml-language-server: \$schema=\.\/(\S+)\.schema\.json$/m.exec(text)?.[1];
      if (modeline === undefined) {
        // A zones file (parseZones) is no configuration: its list is a camera's `zones`.
        expect(file).toMatch(/^zones\./);
        const zones = schemaAt('residuum#/properties/cameras/items/properties/zones');
        expect(zones(doc.zones), `${file}: ${jsonErrors(zones)}`).toBe(true);
        continue;
      }
      const validate = schemaAt(modeline);
      expect(validate(doc), `${file}: ${jsonErrors(validate)}`).toBe(true);
      const path = join(configDir, file);
      if (modeline === 'residuum') expect(loadConfig(path).cameras.length).toBeGreaterThan(0);
      else expect(validateCollectorConfig(doc, path).mqtt.url).toMatch(/^mqtt/);
      checked++;
    }
    expect(checked).toBeGreaterThanOrEqual(2); // demo.yaml and collector.example.yaml
  });

  it('accept the YAML examples of the README (each against the part of the schema it shows)', () => {
    const blocks = [...readme.matchAll(/^( *)```yaml\n([\s\S]*?)^\1```/gm)].map((m) => m[2].replace(new RegExp(`^${m[1]}`, 'gm'), ''));
    expect(blocks.length).toBeGreaterThanOrEqual(4);
    for (const block of blocks) {
      const doc = withoutElisions(parseYaml(block)) as Record<string, unknown>;
      const keys = Object.keys(doc);
      // The whole service file; the collector's (it has storage.url); or sections and zone fields on their own.
      const refs: [string, unknown][] =
        'cameras' in doc
          ? [['residuum', doc]]
          : 'mqtt' in doc && 'site' in doc
            ? [['collector', doc]]
            : keys.map((k) => [k === 'perspective' ? 'residuum#/properties/cameras/items/properties/zones/items/properties/perspective' : `residuum#/properties/${k}`, doc[k]]);
      for (const [ref, value] of refs) {
        const validate = schemaAt(ref);
        expect(validate(value), `README block starting ${JSON.stringify(block.slice(0, 40))} against ${ref}: ${jsonErrors(validate)}`).toBe(true);
      }
    }
  });

  it('refuse what the program refuses: a misspelt key, a number out of range, an unknown source kind, a missing collector mqtt', () => {
    const demo = parseYaml(readFileSync(join(configDir, 'demo.yaml'), 'utf8')) as Record<string, any>;
    const broken = (change: (doc: Record<string, any>) => void) => {
      const doc = structuredClone(demo);
      change(doc);
      return doc;
    };
    const cases = [
      broken((d) => (d.cameras[0].sampleSecond = 5)),
      broken((d) => (d.models.keep = 51)),
      broken((d) => (d.cameras[0].size = [320, 8])),
      broken((d) => (d.cameras[0].source = { kind: 'usb' })),
      broken((d) => (d.cameras[0].zones[0].personArea = 1e308)),
      broken((d) => (d.cameras[0].zones[0].polygon = [[0.1, 0.1], [0.9, 0.9]])),
      broken((d) => (d.server.port = '8080')),
      broken((d) => delete d.cameras),
    ];
    const validate = schemaAt('residuum');
    for (const doc of cases) {
      expect(validate(doc), JSON.stringify(doc).slice(0, 80)).toBe(false);
      expect(() => validateConfig(doc, 'demo.yaml')).toThrow(ConfigError);
    }
    expect(validate(demo)).toBe(true);
    const collect = schemaAt('collector');
    expect(collect({ site: { name: 'x' } })).toBe(false);
    expect(() => validateCollectorConfig({ site: { name: 'x' } }, 'collect.yaml')).toThrow('collect.yaml: mqtt is required');
    expect(collect({ mqtt: { url: 'mqtt://h', queueLimit: 5 } })).toBe(false); // a publisher-only key
  });
});
