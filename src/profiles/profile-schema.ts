// The profile's JSON Schema (draft 2020-12), generated from the Profile type in types.ts by
// ts-json-schema-generator, so the shape is declared once. `npm run openapi` writes
// openapi/profile.schema.json; parseProfile validates with that file and a test checks it is current.
import { createGenerator } from 'ts-json-schema-generator';
import { toDraft2020 } from './report-schema.ts';

type Schema = Record<string, unknown>;

const isSchema = (value: unknown): value is Schema =>
  typeof value === 'object' && value !== null && !Array.isArray(value);

/**
 * A rule's `type` first and `required` in declaration order: ajv reports problems in that order,
 * and the first one is the message parseProfile throws.
 */
function typeFirst(def: Schema): Schema {
  const { properties, required } = def;
  if (!isSchema(properties) || !('type' in properties)) return def;
  const { type, ...rest } = properties;
  const order = ['type', ...Object.keys(rest)];
  const ordered = Array.isArray(required) ? order.filter((key) => required.includes(key)) : required;
  return { ...def, properties: { type, ...rest }, required: ordered };
}

/**
 * An enum or const of strings says the type already: without the generator's `type: string` beside
 * it, a wrong value gets one problem (not one of the allowed values), not two.
 */
function withoutRedundantType(value: unknown): unknown {
  if (Array.isArray(value)) return value.map(withoutRedundantType);
  if (!isSchema(value)) return value;
  const { type, ...rest } = value;
  const strings =
    (Array.isArray(rest.enum) && rest.enum.every((v) => typeof v === 'string')) || typeof rest.const === 'string';
  const kept = type === 'string' && strings ? rest : value;
  return Object.fromEntries(
    Object.entries(kept).map(([key, v]) => [
      key,
      key === 'properties' && isSchema(v)
        ? Object.fromEntries(Object.entries(v).map(([name, p]) => [name, withoutRedundantType(p)]))
        : withoutRedundantType(v),
    ]),
  );
}

/** ajv's strict mode wants the discriminator's tag declared beside it, as a string. */
function tagDeclared(def: Schema): Schema {
  const { discriminator } = def;
  if (!isSchema(discriminator) || typeof discriminator.propertyName !== 'string') return def;
  return { ...def, properties: { [discriminator.propertyName]: { type: 'string' } } };
}

export function generateProfileSchema(): Schema {
  const generated = withoutRedundantType(
    toDraft2020(
      createGenerator({
        path: new URL('./types.ts', import.meta.url).pathname,
        tsconfig: new URL('../../tsconfig.json', import.meta.url).pathname,
        type: 'Profile',
        skipTypeCheck: true,
        additionalProperties: false,
        sortProps: false,
        // oneOf with discriminator: ajv then checks a rule against its own type's schema only.
        discriminatorType: 'open-api',
        extraTags: ['dependentRequired'],
      }).createSchema('Profile'),
    ),
  );
  if (!isSchema(generated) || !isSchema(generated.$defs) || !isSchema(generated.$defs.Profile))
    throw new Error('the generator gave no Profile definition');
  const { Profile: profile, ...defs } = generated.$defs;
  return {
    $schema: 'https://json-schema.org/draft/2020-12/schema',
    $id: 'https://earmark.invalid/schemas/profile.schema.json',
    title: 'Earmark delivery profile',
    // The profile object at the root (not a $ref), as the API embeds it as a component.
    ...profile,
    $defs: Object.fromEntries(
      Object.entries(defs).map(([name, def]) => [name, isSchema(def) ? tagDeclared(typeFirst(def)) : def]),
    ),
  };
}
